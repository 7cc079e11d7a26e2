"""Atomic writing of files and of whole build folders.

A build never leaves a half-written file in place of a good one. Every file is
written to a hidden temporary path beside its target, on the same file system,
flushed to disk, and moved into place with :func:`os.replace` only when it is
complete; a whole build is written into a hidden temporary folder beside the
target folder and moved into place the same way.

Names of the temporary paths (``<pid>`` is the writing process, ``<token>`` random):

- ``.<stem>.partial-<pid>-<token><suffix>`` for a file, e.g.
  ``.paleomap.partial-4242-9f1c.gpkg`` (the real suffix stays last, so GDAL picks
  the right driver while writing);
- ``.<name>.partial-<pid>-<token>`` for a build folder being written;
- ``.<name>.old-<pid>-<token>`` for the previous build while it is swapped out;
- ``.<name>.lock`` for the lock of the build folder ``<name>``.

Ownership. The process writing a build folder holds an exclusive lock
(``fcntl.flock``) on ``.<name>.lock`` beside it, from its first check until the new
build is in place, and removes the file when done. Only the holder of that lock
tidies leftovers, so a leftover ``.partial-`` or ``.old-`` folder is removed only when
no process holds the lock, that is when its writer is gone; process ids do not
decide this (they mean nothing across containers or machines sharing a disk). A
second build onto a folder that is being written is refused at once. Each
temporary folder also holds a random token that its writer checks just before the
swap, so a build never installs a folder it did not write to the end. Where the
system has no ``fcntl`` locks, process ids decide, as the only way left.

Replacing an existing build (``overwrite=True``). On Linux the new and the old
folder are exchanged in one step (``renameat2`` with ``RENAME_EXCHANGE``), so at
every instant either the old complete build or the new complete build is at the
target. Where the system cannot exchange (other platforms, some network file
systems) the old folder is renamed aside to ``.<name>.old-<pid>-<token>`` and the
new one renamed in: two renames, with a window of a few microseconds in which the
target is missing. A process killed inside that window leaves the old build
complete under its ``.old-`` name, and the next run restores it before doing
anything else (see :func:`recover_leftovers`).

The manifest. A build folder made here holds a small marker file,
:data:`BUILD_MARKER`, written last, just before the folder is moved into place: a
JSON record of the paleomap version, the time, and the list of every file the
build wrote. ``overwrite=True`` replaces only an empty folder or a folder that holds
the marker and nothing its list does not name; anything else (a user's notes, a GIS
project, the inputs of the build itself) stops the build before any work, naming
the files. The old build is then removed file by file from its list, never as a
whole tree; anything found in it that the list does not name is kept, renamed to
``<name>.kept-<UTC time>`` beside the target, with a warning.

Faults of the system (no permission, disk full, a busy mount point) become one
:class:`~paleomap.errors.BuildWriteError` naming the cause, raised after the
temporary folder is removed; the previous build stays whole.

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
import errno
import json
import logging
import os
import re
import secrets
import shutil
import socket
import sys
import threading
import warnings
from collections.abc import Iterable, Iterator
from datetime import UTC, datetime
from pathlib import Path

from ..errors import (
    BuildBusyError,
    BuildWriteError,
    OutputExistsError,
    PaleomapError,
    PaleomapWarning,
)

__all__ = [
    "BUILD_MARKER",
    "atomic_build_dir",
    "atomic_output_path",
    "atomic_write_bytes",
    "atomic_write_text",
    "build_lock",
    "check_build_target",
    "lock_path",
    "read_manifest",
    "recover_leftovers",
]

_log = logging.getLogger(__name__)

BUILD_MARKER = ".paleomap-build"
"""Name of the marker file (with the list of its files) that every complete build holds."""

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

try:  # POSIX; elsewhere ownership falls back to process ids
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None

_TOKEN_FILE = ".paleomap-token"
_MANIFEST_KEY = "files"
_SHOWN_FILES = 8

# Targets whose lock this process holds: absolute path -> [file descriptor, depth].
_held: dict[Path, list[int]] = {}
_held_guard = threading.Lock()

# errno values that mean "the system would not let us write", not "paleomap is wrong".
_RESOURCE_ERRNOS = {
    errno.ENOSPC,
    errno.EDQUOT,
    errno.EFBIG,
    errno.EACCES,
    errno.EPERM,
    errno.EROFS,
    errno.EBUSY,
    errno.EIO,
    errno.EXDEV,
    errno.ENAMETOOLONG,
    errno.EMFILE,
    errno.ENFILE,
}
# The same faults as GDAL, SQLite and others word them (they do not always give an errno).
_RESOURCE_WORDS = (
    "no space left",
    "disk is full",
    "disk full",
    "file too large",
    "read-only file system",
    "permission denied",
    "disk quota",
)


def lock_path(target: str | os.PathLike) -> Path:
    """The lock file that the writer of the build folder ``target`` holds.

    Examples
    --------
    >>> lock_path("/data/build").name
    '.build.lock'
    """
    target = Path(target)
    return target.parent / f".{target.name}.lock"


@contextlib.contextmanager
def build_lock(target: str | os.PathLike) -> Iterator[bool]:
    """Hold the exclusive lock of the build folder ``target`` (see the module notes).

    Re-entrant within one process. The lock file is created beside ``target`` and
    removed on release. Where the system has no ``fcntl`` locks, or the parent folder
    does not exist yet, nothing is locked and False is yielded.

    Raises
    ------
    BuildBusyError
        Another process holds the lock: it is writing this build folder now.
    BuildWriteError
        The lock file cannot be created (e.g. no permission in the parent folder).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "build"
    >>> with build_lock(out) as locked:
    ...     lock_path(out).exists()
    True
    >>> lock_path(out).exists()
    False
    """
    target = Path(target).absolute()
    with _held_guard:
        entry = _held.get(target)
        if entry is not None:
            entry[1] += 1
    if entry is not None:
        try:
            yield True
        finally:
            with _held_guard:
                entry[1] -= 1
        return
    if fcntl is None or not target.parent.is_dir():
        yield False
        return
    path = lock_path(target)
    fd = _acquire(path, target)
    entry = [fd, 1]
    with _held_guard:
        _held[target] = entry
    try:
        yield True
    finally:
        with _held_guard:
            entry[1] -= 1
            done = entry[1] == 0
            if done:
                del _held[target]
        if done:
            # Unlinked while still held: a waiting process then finds the inode gone
            # and opens a fresh lock file (see _acquire).
            with contextlib.suppress(OSError):
                os.unlink(path)
            os.close(fd)


def _acquire(path: Path, target: Path) -> int:
    for _ in range(20):
        try:
            fd = os.open(path, os.O_RDWR | os.O_CREAT | getattr(os, "O_CLOEXEC", 0), 0o644)
        except OSError as exc:
            raise _write_error(exc, target, "cannot create its lock file") from exc
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as exc:
            os.close(fd)
            if exc.errno in (errno.EWOULDBLOCK, errno.EAGAIN, errno.EACCES):
                raise BuildBusyError(
                    f"another paleomap process is writing the build folder {str(target)!r} "
                    f"now (it holds {path.name!r}). Wait for it to finish, or choose another "
                    "output folder"
                ) from None
            raise _write_error(exc, target, "cannot lock it") from exc
        try:
            same = os.fstat(fd).st_ino == os.stat(path).st_ino
        except FileNotFoundError:
            same = False
        if same:
            with contextlib.suppress(OSError):
                os.ftruncate(fd, 0)
                os.write(fd, f"{os.getpid()} {socket.gethostname()}\n".encode())
            return fd
        os.close(fd)  # the holder removed it as we opened it: try the new one
    raise BuildBusyError(  # pragma: no cover - twenty handovers in a row
        f"the build folder {str(target)!r} keeps changing hands; try again"
    )


def _holds_lock(target: Path) -> bool:
    with _held_guard:
        return target in _held


def recover_leftovers(target: str | os.PathLike) -> None:
    """Tidy what an interrupted earlier run left beside ``target``.

    - If ``target`` is missing and a ``.<name>.old-`` folder exists (a run was killed
      between the two renames of a swap), the old build is restored to ``target``.
    - Otherwise ``.old-`` folders of dead writers are removed, file by file from
      their lists (a run was killed after the swap, while deleting the old build).
    - ``.<name>.partial-`` folders of dead writers are removed (a run was killed
      while writing).

    A writer is dead when nobody holds the target's lock (:func:`build_lock`); this
    function takes the lock, so it refuses while another process writes the build.
    Without locks (no ``fcntl``) a writer is dead when its process id is not running.

    Parameters
    ----------
    target : path-like
        The build folder.

    Raises
    ------
    BuildBusyError
        Another process is writing this build folder.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> recover_leftovers(pathlib.Path(tempfile.mkdtemp()) / "build")
    """
    target = Path(target).absolute()
    parent = target.parent
    if not parent.is_dir():
        return
    with build_lock(target) as locked:
        _recover(target, locked)


def _recover(target: Path, locked: bool) -> None:
    parent = target.parent
    name = re.escape(target.name)
    old_re = re.compile(r"^\." + name + r"\.old-(\d+)(?:-[0-9a-f]+)?$")
    partial_re = re.compile(r"^\." + name + r"\.partial-(\d+)(?:-[0-9a-f]+)?$")

    def dead(pid: str) -> bool:
        # Under the lock no other writer of this target exists, whatever its pid.
        return locked or not _process_alive(int(pid))

    olds: list[tuple[float, Path]] = []
    partials: list[Path] = []
    for entry in parent.iterdir():
        if entry.is_symlink() or not entry.is_dir():
            continue
        if (m := old_re.match(entry.name)) and dead(m.group(1)):
            olds.append((entry.stat().st_mtime, entry))
        elif (m := partial_re.match(entry.name)) and dead(m.group(1)):
            partials.append(entry)
    olds.sort()
    if olds and not (target.exists() or target.is_symlink()):
        _, newest = olds.pop()
        os.rename(newest, target)
        _fsync_dir(parent)
        _log.warning(
            "restored the previous build %s from %s (an earlier run stopped)", target, newest.name
        )
    for _, old in olds:
        _log.info("removing leftover old build %s", old)
        _remove_build(old, target)
    for partial in partials:
        _log.info("removing leftover partial build %s", partial)
        if (partial / BUILD_MARKER).is_file():
            # A complete build (an old one swapped out, or a new one not yet moved):
            # remove what its list names and keep anything else.
            _remove_build(partial, target)
        else:
            shutil.rmtree(partial, ignore_errors=True)


def check_build_target(
    target: str | os.PathLike,
    *,
    overwrite: bool,
    marker: str | None = BUILD_MARKER,
    inputs: Iterable[str | os.PathLike] = (),
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
    inputs : iterable of path-like
        Files the build reads; a target that holds one of them is refused.

    Returns
    -------
    pathlib.Path
        ``target`` as an absolute path.

    Raises
    ------
    OutputExistsError
        As :func:`atomic_build_dir`, or ``target`` holds one of ``inputs``.
    BuildBusyError
        Another process is writing ``target``.
    BuildWriteError
        ``target`` cannot be written (no permission, a mount point).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> check_build_target(pathlib.Path(tempfile.mkdtemp()) / "new", overwrite=False).name
    'new'
    """
    target = Path(target).absolute()
    _check_inputs_outside(target, inputs)
    recover_leftovers(target)
    _check_replaceable(target, overwrite, marker)
    _check_writable(target)
    return target


@contextlib.contextmanager
def atomic_build_dir(
    target: str | os.PathLike, *, overwrite: bool, marker: str | None = BUILD_MARKER
) -> Iterator[Path]:
    """Build into a temporary folder beside ``target`` and move it into place on success.

    On entry, leftovers of interrupted runs are tidied (:func:`recover_leftovers`)
    and an existing ``target`` is refused unless ``overwrite`` is true, before any
    work starts. The body writes into the yielded folder
    (``.<name>.partial-<pid>-<token>`` beside ``target``, on the same file system),
    while this process holds the target's lock. When the body completes, the
    list of the folder's files is written into the marker file and the folder
    replaces ``target`` (see the module notes for how an old build is swapped out
    and removed). If the body raises, including ``KeyboardInterrupt``, the
    temporary folder is removed and an old build is left untouched.

    Parameters
    ----------
    target : path-like
        The build folder. Its parent is created if missing.
    overwrite : bool
        Whether an existing build at ``target`` may be replaced.
    marker : str or None
        Name of the marker file (with the list of the build's files) written into
        every build, and required (unless the folder is empty) in a folder that
        ``overwrite`` replaces, which must hold nothing else. None turns both off.

    Yields
    ------
    pathlib.Path
        The temporary folder to write the build into.

    Raises
    ------
    OutputExistsError
        ``target`` exists and ``overwrite`` is false; or ``target`` is a file, or a
        non-empty folder that is not a paleomap build or holds files the build did
        not write.
    BuildBusyError
        Another process is writing ``target``.
    BuildWriteError
        The system refused a write (no permission, disk full, a busy mount point);
        the temporary folder is removed and the previous build is whole.

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
    try:
        parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise _write_error(exc, target, "cannot create its parent folder") from exc
    with build_lock(target):
        # Again, now under the lock: someone may have written there since the check.
        _recover(target, locked=_holds_lock(target))
        _check_replaceable(target, overwrite, marker)
        token = secrets.token_hex(8)
        partial = parent / f".{target.name}.partial-{os.getpid()}-{token}"
        made = claimed = False
        try:
            partial.mkdir()
            (partial / _TOKEN_FILE).write_text(token, encoding="ascii")
            made = True
            _log.info("writing build into %s", partial)
            yield partial
            _claim(partial, token, target)
            claimed = True
            if marker is not None:
                _write_marker(partial / marker, partial)
            _fsync_dir(partial)
            # Someone may have created the target while we worked; ask again.
            _check_replaceable(target, overwrite, marker)
            replaced = _move_into_place(partial, target)
        except BaseException as exc:
            fault = _is_resource_fault(exc) or _probe_write(partial, exc)
            # Before ``made`` the folder can only be the one just created under a name
            # holding our random token (a signal may land between two lines).
            if not made or claimed or _is_ours(partial, token):
                shutil.rmtree(partial, ignore_errors=True)
            if fault:
                raise _write_error(fault if isinstance(fault, OSError) else exc, target) from exc
            raise
        if replaced is not None:
            # The new build is in place; only now is the old one removed, by its list.
            _remove_build(replaced, target)
    _log.info("build complete: %s", target)


def _is_ours(partial: Path, token: str) -> bool:
    try:
        return (partial / _TOKEN_FILE).read_text(encoding="ascii") == token
    except (OSError, UnicodeDecodeError):
        return False


def _claim(partial: Path, token: str, target: Path) -> None:
    """Check that ``partial`` is still the folder this process wrote, then drop the token."""
    if not _is_ours(partial, token):
        raise PaleomapError(
            f"the temporary folder {partial.name!r} of the build {str(target)!r} was removed "
            "or replaced by another process while this build was writing it; nothing was "
            "installed. Run the build again, one process per output folder"
        )
    (partial / _TOKEN_FILE).unlink()


def _check_inputs_outside(target: Path, inputs: Iterable[str | os.PathLike]) -> None:
    real = Path(os.path.realpath(target))
    inside: list[str] = []
    for p in inputs:
        rp = Path(os.path.realpath(p))
        if (rp == real or real in rp.parents) and str(p) not in inside:
            inside.append(str(p))
    if inside:
        raise OutputExistsError(
            f"the output folder {str(target)!r} holds inputs of this build "
            f"({_list_names(inside)}), so paleomap will not write it. Keep the inputs outside "
            "the build folder, or choose another output folder"
        )


def _check_writable(target: Path) -> None:
    here = target.parent
    while not here.exists() and here != here.parent:
        here = here.parent
    if not os.access(here, os.W_OK | os.X_OK):
        raise BuildWriteError(
            f"cannot write the build {str(target)!r}: no permission to create files in "
            f"{str(here)!r}. Nothing was written. Choose an output folder you may write to"
        )


def _list_names(names: list[str]) -> str:
    shown = ", ".join(repr(n) for n in names[:_SHOWN_FILES])
    if len(names) > _SHOWN_FILES:
        shown += f" and {len(names) - _SHOWN_FILES} more"
    return shown


def read_manifest(folder: str | os.PathLike, marker: str = BUILD_MARKER) -> list[str] | None:
    """The files a paleomap build folder lists as its own, or None without a usable list.

    Paths are relative to ``folder``, with ``/`` separators; the marker file itself
    is not listed.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "b"
    >>> with atomic_build_dir(out, overwrite=False) as tmp:
    ...     _ = atomic_write_text(tmp / "rasters" / "a.tif", "x")
    >>> read_manifest(out)
    ['rasters/a.tif']
    """
    try:
        info = json.loads((Path(folder) / marker).read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError):
        return None
    files = info.get(_MANIFEST_KEY) if isinstance(info, dict) else None
    if not isinstance(files, list) or not all(isinstance(f, str) for f in files):
        return None
    # A list is trusted only for plain relative paths inside the folder.
    if any(f.startswith("/") or ".." in f.split("/") or not f for f in files):
        return None
    return files


def _entries(folder: Path) -> tuple[list[str], list[str]]:
    """(files, folders) inside ``folder``, relative; a symbolic link counts as a file."""
    files: list[str] = []
    dirs: list[str] = []
    for root, dirnames, filenames in os.walk(folder, followlinks=False):
        rel = Path(root).relative_to(folder)
        for d in list(dirnames):
            p = Path(root) / d
            if p.is_symlink():
                files.append((rel / d).as_posix())
                dirnames.remove(d)
            else:
                dirs.append((rel / d).as_posix())
        files += [(rel / f).as_posix() for f in filenames]
    return files, dirs


def _foreign_entries(folder: Path, listed: list[str], marker: str) -> list[str]:
    """Entries of ``folder`` that its list does not name (the topmost of each branch)."""
    allowed = set(listed) | {marker}
    allowed_dirs = {p.as_posix() for f in listed for p in Path(f).parents if p != Path(".")}
    files, dirs = _entries(folder)
    foreign = [d for d in dirs if d not in allowed_dirs]
    foreign += [f for f in files if f not in allowed]
    foreign_dirs = {d for d in foreign if d in set(dirs)}

    def covered(p: str) -> bool:
        return any(str(q.as_posix()) in foreign_dirs for q in Path(p).parents)

    return sorted(f + ("/" if f in foreign_dirs else "") for f in foreign if not covered(f))


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
    if os.path.ismount(target):
        raise BuildWriteError(
            f"cannot write the build {str(target)!r}: it is a mount point, and paleomap "
            "replaces a build folder by renaming it. Nothing was written. Choose a folder "
            "inside it"
        )
    if marker is None:
        return
    contents = sorted(p.name for p in target.iterdir())
    if not contents:
        return
    if not (target / marker).is_file():
        raise OutputExistsError(
            f"the output folder {str(target)!r} is not empty and does not look like a "
            f"paleomap build (no {marker!r} file in it), so paleomap will not replace it "
            f"even with --overwrite. It holds {_list_names(contents)}. Choose another output "
            "folder, or empty it yourself"
        )
    listed = read_manifest(target, marker)
    if listed is None:
        raise OutputExistsError(
            f"the output folder {str(target)!r} has no readable list of the files paleomap "
            f"wrote into it ({marker!r} is damaged or from an older paleomap), so paleomap "
            "will not replace it even with --overwrite. Choose another output folder, or "
            "delete the old build yourself"
        )
    foreign = _foreign_entries(target, listed, marker)
    if foreign:
        raise OutputExistsError(
            f"the output folder {str(target)!r} holds files that paleomap did not write: "
            f"{_list_names(foreign)}. paleomap replaces only its own builds, so it stops "
            "before any work. Move those files out of the build folder, or choose another "
            "output folder"
        )
    _, dirs = _entries(target)
    for d in [".", *dirs]:
        folder = target / d
        if not os.access(folder, os.W_OK | os.X_OK):
            raise BuildWriteError(
                f"cannot replace the build {str(target)!r}: no permission to remove the "
                f"files in {str(folder)!r}. Nothing was written. Make it writable, or choose "
                "another output folder"
            )


def _write_marker(path: Path, folder: Path) -> None:
    from .._version import __version__

    files, _ = _entries(folder)
    info = {
        "paleomap": __version__,
        "completed_utc": datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        _MANIFEST_KEY: sorted(f for f in files if f != path.name),
    }
    atomic_write_text(path, json.dumps(info, indent=2) + "\n")


def _remove_build(folder: Path, target: Path, marker: str = BUILD_MARKER) -> None:
    """Remove a build folder that paleomap replaced: only the files its list names.

    Anything else found in it (added while the new build was written) is kept: the
    folder is renamed to a visible ``<name>.kept-<UTC time>`` beside the target and a
    warning names it.
    """
    listed = read_manifest(folder, marker) or []
    for rel in [*listed, marker, _TOKEN_FILE]:
        with contextlib.suppress(FileNotFoundError, NotADirectoryError):
            p = folder / rel
            if p.is_symlink() or not p.is_dir():
                p.unlink()
    for root, _dirs, _files in os.walk(folder, topdown=False):
        with contextlib.suppress(OSError):
            os.rmdir(root)
    if not folder.exists():
        return
    stamp = datetime.now(UTC).strftime("%Y%m%dT%H%M%SZ")
    kept = target.parent / f"{target.name}.kept-{stamp}-{secrets.token_hex(2)}"
    try:
        os.rename(folder, kept)
    except OSError:
        kept = folder
    warnings.warn(
        f"the previous build of {str(target)!r} held files paleomap did not write (or could "
        f"not remove); they are kept in {str(kept)!r}",
        PaleomapWarning,
        stacklevel=2,
    )


def _move_into_place(partial: Path, target: Path) -> Path | None:
    """Move ``partial`` to ``target``; return where the replaced old build now is."""
    parent = target.parent
    if not target.exists():
        os.rename(partial, target)
        _fsync_dir(parent)
        return None
    if _exchange(partial, target):
        # ``partial`` now holds the old build.
        _fsync_dir(parent)
        return partial
    old = parent / f".{target.name}.old-{os.getpid()}-{secrets.token_hex(8)}"
    os.rename(target, old)
    try:
        os.rename(partial, target)
    except BaseException:
        os.rename(old, target)
        raise
    _fsync_dir(parent)
    return old


def _is_resource_fault(exc: BaseException) -> bool:
    """Whether ``exc`` (or what caused it) is the system refusing a write."""
    seen = set()
    while exc is not None and id(exc) not in seen:
        seen.add(id(exc))
        if isinstance(exc, PaleomapError) or not isinstance(exc, Exception):
            return False
        if isinstance(exc, OSError) and exc.errno in _RESOURCE_ERRNOS:
            return True
        text = str(exc).lower()
        if any(w in text for w in _RESOURCE_WORDS):
            return True
        exc = exc.__cause__ or exc.__context__
    return False


_PROBE_BYTES = 1 << 20


def _probe_write(folder: Path, exc: BaseException) -> OSError | None:
    """After an unexplained failure, whether the disk still takes a write.

    Libraries do not always say that the disk is full: GDAL may report the SQLite
    table it could not create instead. One more write of 1 MiB tells the two apart;
    it returns the system's error if that write fails, else None.
    """
    if isinstance(exc, PaleomapError) or not isinstance(exc, Exception) or not folder.is_dir():
        return None
    probe = folder / ".paleomap-probe"
    try:
        with open(probe, "wb") as fh:
            fh.write(b"\0" * _PROBE_BYTES)
            fh.flush()
            os.fsync(fh.fileno())
    except OSError as err:
        if err.errno in _RESOURCE_ERRNOS:
            return err
    finally:
        with contextlib.suppress(OSError):
            probe.unlink()
    return None


def _write_error(exc: BaseException, target: Path, what: str = "") -> BuildWriteError:
    reason = _reason(exc)
    state = (
        "The previous build is unchanged"
        if (target / BUILD_MARKER).exists()
        else "Nothing was written"
    )
    doing = f" ({what})" if what else ""
    err = BuildWriteError(f"cannot write the build {str(target)!r}{doing}: {reason}. {state}")
    err.errno = getattr(exc, "errno", None)
    return err


def _reason(exc: BaseException) -> str:
    chain = []
    while exc is not None and exc not in chain:
        chain.append(exc)
        exc = exc.__cause__ or exc.__context__
    for e in chain:
        if isinstance(e, OSError) and e.errno in _RESOURCE_ERRNOS:
            return os.strerror(e.errno)
    for e in chain:
        text = str(e).lower()
        for w in _RESOURCE_WORDS:
            if w in text:
                return w[:1].upper() + w[1:]
    return type(chain[0]).__name__ if chain else "unknown"


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
    if err in (errno.EBUSY, errno.EACCES, errno.EPERM, errno.EROFS):
        # A real refusal, not a missing feature: renaming in two steps would fail too.
        raise OSError(err, os.strerror(err), str(b))
    _log.debug("renameat2 exchange not available (errno %d); renaming in two steps", err)
    return False
