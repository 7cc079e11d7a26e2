"""Atomic writing of files and of whole build folders.

A build never leaves a half-written file in place of a good one. Every file is
written to a hidden temporary path beside its target, on the same file system,
flushed to disk, and moved into place with :func:`os.replace` only when it is
complete; a whole build is written into a hidden temporary folder beside the
target folder and moved into place the same way.

Names of the temporary paths (``<pid>`` is the writing process):

- ``.<stem>.partial-<pid>-<token><suffix>`` for a file, e.g.
  ``.paleomap.partial-4242-9f1c.gpkg`` (the real suffix stays last, so GDAL picks
  the right driver while writing);
- ``.<name>.partial-<pid>`` for a build folder being written;
- ``.<name>.old-<pid>`` for the previous build while it is swapped out.

Replacing an existing build (``overwrite=True``). On Linux the new and the old
folder are exchanged in one step (``renameat2`` with ``RENAME_EXCHANGE``), so at
every instant either the old complete build or the new complete build is at the
target. Where the system cannot exchange (other platforms, some network file
systems) the old folder is renamed aside to ``.<name>.old-<pid>`` and the new one
renamed in: two renames, with a window of a few microseconds in which the target
is missing. A process killed inside that window leaves the old build complete
under its ``.old-`` name, and the next run restores it before doing anything else
(see :func:`recover_leftovers`). Leftover ``.partial-`` folders and files of
processes that are no longer running are removed at the next run; those of a
running process are left alone, so one build folder must be written by one
process at a time.

A build folder made here holds a small marker file, :data:`BUILD_MARKER`, written
last, just before the folder is moved into place. ``overwrite=True`` replaces only
a folder that holds the marker or is empty, so a mistyped ``--out`` cannot wipe an
unrelated folder.

Examples
--------
>>> import tempfile, pathlib
>>> out = pathlib.Path(tempfile.mkdtemp()) / "build"
>>> with atomic_build_dir(out, overwrite=False) as tmp:
...     _ = atomic_write_text(tmp / "note.txt", "hello")
>>> (out / "note.txt").read_text()
'hello'
"""

from __future__ import annotations

import contextlib
import ctypes
import json
import logging
import os
import re
import secrets
import shutil
import sys
from collections.abc import Iterator
from datetime import UTC, datetime
from pathlib import Path

from ..errors import OutputExistsError

__all__ = [
    "BUILD_MARKER",
    "atomic_build_dir",
    "atomic_output_path",
    "atomic_write_bytes",
    "atomic_write_text",
    "check_build_target",
    "recover_leftovers",
]

_log = logging.getLogger(__name__)

BUILD_MARKER = ".paleomap-build"
"""Name of the marker file that every complete build folder holds."""

# SQLite may leave these beside a database killed mid-write.
_SQLITE_SIDECARS = ("-journal", "-wal", "-shm")


# --------------------------------------------------------------------------- files


def atomic_write_bytes(path: str | os.PathLike, data: bytes) -> Path:
    """Write bytes to ``path`` atomically.

    The bytes go to a temporary file beside ``path``, which is flushed to disk and
    then moved onto ``path``; a reader sees either the old file or the new one,
    never a part. The parent folder is created if missing.

    Parameters
    ----------
    path : path-like
        Target file.
    data : bytes
        The whole content.

    Returns
    -------
    pathlib.Path
        ``path``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "a.bin"
    >>> atomic_write_bytes(p, b"abc").read_bytes()
    b'abc'
    """
    with atomic_output_path(path) as tmp, open(tmp, "xb") as fh:
        fh.write(data)
    return Path(path)


def atomic_write_text(path: str | os.PathLike, text: str, *, encoding: str = "utf-8") -> Path:
    """Write text to ``path`` atomically (see :func:`atomic_write_bytes`).

    Parameters
    ----------
    path : path-like
        Target file.
    text : str
        The whole content; newlines are written as given.
    encoding : str
        Text encoding, UTF-8 by default.

    Returns
    -------
    pathlib.Path
        ``path``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "a.txt"
    >>> atomic_write_text(p, "x = 1\\n").read_text()
    'x = 1\\n'
    """
    return atomic_write_bytes(path, text.encode(encoding))


@contextlib.contextmanager
def atomic_output_path(path: str | os.PathLike) -> Iterator[Path]:
    """Give a temporary path to write a file to, and move it onto ``path`` on success.

    For writers that open the file themselves (GDAL, SQLite). The temporary path is
    in the same folder and ends with the same suffix, so drivers chosen by suffix
    still work. On success the file is flushed to disk and replaces ``path`` in one
    step; on any exception, including ``KeyboardInterrupt``, the temporary file
    (and any SQLite journal beside it) is removed and ``path`` is left as it was.
    Leftover temporary files of dead processes for the same target are removed
    first.

    Parameters
    ----------
    path : path-like
        Target file. Its parent folder is created if missing.

    Yields
    ------
    pathlib.Path
        The temporary path; it does not exist yet.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "t.txt"
    >>> with atomic_output_path(p) as tmp:
    ...     _ = tmp.write_text("done")
    >>> p.read_text()
    'done'
    """
    path = Path(path)
    if path.exists() and path.is_dir():
        raise IsADirectoryError(f"{str(path)!r} is a folder; cannot write a file in its place")
    parent = path.parent
    parent.mkdir(parents=True, exist_ok=True)
    _remove_stale_partial_files(path)
    tmp = parent / f".{path.stem}.partial-{os.getpid()}-{secrets.token_hex(4)}{path.suffix}"
    try:
        yield tmp
        if not tmp.exists():
            raise FileNotFoundError(f"the writer did not create {str(tmp)!r}")
        _fsync_file(tmp)
        os.replace(tmp, path)
        _fsync_dir(parent)
    except BaseException:
        _remove_file_and_sidecars(tmp)
        raise
    _log.debug("wrote %s", path)


def _remove_file_and_sidecars(tmp: Path) -> None:
    for p in (tmp, *(tmp.with_name(tmp.name + s) for s in _SQLITE_SIDECARS)):
        with contextlib.suppress(FileNotFoundError):
            p.unlink()


def _remove_stale_partial_files(path: Path) -> None:
    pattern = re.compile(
        r"^\." + re.escape(path.stem) + r"\.partial-(\d+)-[0-9a-f]+" + re.escape(path.suffix) + "$"
    )
    with contextlib.suppress(FileNotFoundError):
        for entry in path.parent.iterdir():
            m = pattern.match(entry.name)
            if m and not _process_alive(int(m.group(1))) and entry.is_file():
                _log.info("removing leftover partial file %s", entry)
                _remove_file_and_sidecars(entry)


def _fsync_file(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _fsync_dir(path: Path) -> None:
    # A rename is durable only once its folder is flushed; not possible on Windows.
    if os.name != "posix":
        return
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _process_alive(pid: int) -> bool:
    if pid == os.getpid():
        # Our own leftovers are from an earlier, failed attempt in this process.
        return False
    if os.name != "posix":
        return True  # cannot tell cheaply; leave it alone
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


# ------------------------------------------------------------------- build folders


def recover_leftovers(target: str | os.PathLike) -> None:
    """Tidy what an interrupted earlier run left beside ``target``.

    - If ``target`` is missing and a ``.<name>.old-<pid>`` folder exists (a run was
      killed between the two renames of a swap), the old build is restored to
      ``target``.
    - Otherwise ``.old-`` folders of dead processes are removed (a run was killed
      after the swap, while deleting the old build).
    - ``.<name>.partial-<pid>`` folders of dead processes are removed (a run was
      killed while writing).

    Called by :func:`atomic_build_dir` on entry; safe to call at any time.

    Parameters
    ----------
    target : path-like
        The build folder.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> recover_leftovers(pathlib.Path(tempfile.mkdtemp()) / "build")
    """
    target = Path(target)
    parent = target.parent
    if not parent.is_dir():
        return
    old_re = re.compile(r"^\." + re.escape(target.name) + r"\.old-(\d+)$")
    partial_re = re.compile(r"^\." + re.escape(target.name) + r"\.partial-(\d+)$")
    olds: list[tuple[float, Path]] = []
    partials: list[Path] = []
    for entry in parent.iterdir():
        if not entry.is_dir() or entry.is_symlink():
            continue
        if (m := old_re.match(entry.name)) and not _process_alive(int(m.group(1))):
            olds.append((entry.stat().st_mtime, entry))
        elif (m := partial_re.match(entry.name)) and not _process_alive(int(m.group(1))):
            partials.append(entry)
    olds.sort()
    if olds and not target.exists():
        _, newest = olds.pop()
        os.rename(newest, target)
        _fsync_dir(parent)
        _log.warning(
            "restored the previous build %s from %s (an earlier run stopped)", target, newest.name
        )
    for _, old in olds:
        _log.info("removing leftover old build %s", old)
        shutil.rmtree(old, ignore_errors=True)
    for partial in partials:
        _log.info("removing leftover partial build %s", partial)
        shutil.rmtree(partial, ignore_errors=True)


def check_build_target(
    target: str | os.PathLike, *, overwrite: bool, marker: str | None = BUILD_MARKER
) -> Path:
    """Check, before any work, that a build may be written to ``target``.

    Tidies leftovers of interrupted runs first (:func:`recover_leftovers`), so a
    build restored from an interrupted swap is protected like any other. Applies
    the same rules as :func:`atomic_build_dir`, which checks again on entry and
    just before moving the new build into place; call this before a long
    computation so that a refusal comes before the work.

    Parameters
    ----------
    target : path-like
        The build folder.
    overwrite : bool
        Whether an existing build at ``target`` may be replaced.
    marker : str or None
        See :func:`atomic_build_dir`.

    Returns
    -------
    pathlib.Path
        ``target`` as an absolute path.

    Raises
    ------
    OutputExistsError
        As :func:`atomic_build_dir`.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> check_build_target(pathlib.Path(tempfile.mkdtemp()) / "new", overwrite=False).name
    'new'
    """
    target = Path(target).absolute()
    recover_leftovers(target)
    _check_replaceable(target, overwrite, marker)
    return target


@contextlib.contextmanager
def atomic_build_dir(
    target: str | os.PathLike, *, overwrite: bool, marker: str | None = BUILD_MARKER
) -> Iterator[Path]:
    """Build into a temporary folder beside ``target`` and move it into place on success.

    On entry, leftovers of interrupted runs are tidied (:func:`recover_leftovers`)
    and an existing ``target`` is refused unless ``overwrite`` is true, before any
    work starts. The body writes into the yielded folder
    (``.<name>.partial-<pid>`` beside ``target``, on the same file system). When
    the body completes, the marker file is written and the folder replaces
    ``target`` (see the module notes for how an old build is swapped out). If the
    body raises, including ``KeyboardInterrupt``, the temporary folder is removed
    and an old build is left untouched.

    Parameters
    ----------
    target : path-like
        The build folder. Its parent is created if missing.
    overwrite : bool
        Whether an existing build at ``target`` may be replaced.
    marker : str or None
        Name of the marker file written into every build, and required (unless the
        folder is empty) in a folder that ``overwrite`` replaces. None turns both off.

    Yields
    ------
    pathlib.Path
        The temporary folder to write the build into.

    Raises
    ------
    OutputExistsError
        ``target`` exists and ``overwrite`` is false; or ``target`` is a file, or a
        non-empty folder without the marker.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "run1"
    >>> with atomic_build_dir(out, overwrite=False) as tmp:
    ...     _ = (tmp / "a.txt").write_text("first")
    >>> with atomic_build_dir(out, overwrite=True) as tmp:
    ...     _ = (tmp / "a.txt").write_text("second")
    >>> (out / "a.txt").read_text()
    'second'
    """
    target = check_build_target(target, overwrite=overwrite, marker=marker)
    parent = target.parent
    parent.mkdir(parents=True, exist_ok=True)

    partial = parent / f".{target.name}.partial-{os.getpid()}"
    if partial.exists():
        shutil.rmtree(partial)
    partial.mkdir()
    _log.info("writing build into %s", partial)
    try:
        yield partial
        if marker is not None:
            _write_marker(partial / marker)
        _fsync_dir(partial)
        # Someone may have created the target while we worked; ask again.
        _check_replaceable(target, overwrite, marker)
        _move_into_place(partial, target)
    except BaseException:
        shutil.rmtree(partial, ignore_errors=True)
        raise
    _log.info("build complete: %s", target)


def _check_replaceable(target: Path, overwrite: bool, marker: str | None) -> None:
    if not (target.exists() or target.is_symlink()):
        return
    if not target.is_dir() or target.is_symlink():
        raise OutputExistsError(
            f"{str(target)!r} exists and is not a folder; paleomap will not replace it. "
            "Choose another output folder"
        )
    if not overwrite:
        raise OutputExistsError(
            f"the output folder {str(target)!r} already exists. Pass --overwrite to replace "
            "it (the old build is kept until the new one is complete), or choose another "
            "output folder"
        )
    if marker is not None and not (target / marker).is_file() and any(target.iterdir()):
        raise OutputExistsError(
            f"the output folder {str(target)!r} is not empty and does not look like a "
            f"paleomap build (no {marker!r} file in it), so paleomap will not replace it "
            "even with --overwrite. Choose another output folder, or empty it yourself"
        )


def _write_marker(path: Path) -> None:
    from .._version import __version__

    info = {
        "paleomap": __version__,
        "completed_utc": datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
    }
    atomic_write_text(path, json.dumps(info, indent=2) + "\n")


def _move_into_place(partial: Path, target: Path) -> None:
    parent = target.parent
    if not target.exists():
        os.rename(partial, target)
        _fsync_dir(parent)
        return
    if _exchange(partial, target):
        # ``partial`` now holds the old build.
        _fsync_dir(parent)
        shutil.rmtree(partial, ignore_errors=True)
        return
    old = parent / f".{target.name}.old-{os.getpid()}"
    if old.exists():
        shutil.rmtree(old)
    os.rename(target, old)
    try:
        os.rename(partial, target)
    except BaseException:
        os.rename(old, target)
        raise
    _fsync_dir(parent)
    shutil.rmtree(old, ignore_errors=True)


_RENAME_EXCHANGE = 2
_AT_FDCWD = -100


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths in one step where the system can; False where it cannot."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        renameat2 = libc.renameat2
    except (OSError, AttributeError):
        return False
    renameat2.argtypes = [
        ctypes.c_int,
        ctypes.c_char_p,
        ctypes.c_int,
        ctypes.c_char_p,
        ctypes.c_uint,
    ]
    renameat2.restype = ctypes.c_int
    rc = renameat2(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE)
    if rc == 0:
        return True
    err = ctypes.get_errno()
    _log.debug("renameat2 exchange not available (errno %d); renaming in two steps", err)
    return False
