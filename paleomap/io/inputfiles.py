"""The guard every reader of a user's input file goes through.

Before paleomap opens a file the project names, :func:`input_file_problem` checks, with
``os.stat`` only (which never blocks):

- that it is a regular file: a FIFO, a device (``/dev/zero``), a socket is refused at
  once, since reading one may block forever or never end;
- that it is no larger than the limit (:data:`MAX_INPUT_BYTES`, or the caller's);
- that it lies inside the project folder (after following symbolic links), unless the
  user allowed files elsewhere (``--allow-outside-inputs``): a project file received
  from someone else cannot make paleomap read ``../../etc/passwd`` and echo it in a
  message.

:func:`read_input_bytes` then reads such a file without blocking on open (``O_NONBLOCK``),
checks the open file again (it may have been swapped since the check), and never reads
more than the limit. Readers of formats that a library opens by path (GDAL, spreadsheet
engines) rely on the first check: a shapefile's companion files are checked with it.

Examples
--------
>>> import tempfile, pathlib, os
>>> root = pathlib.Path(tempfile.mkdtemp())
>>> _ = (root / "cores.csv").write_text("core_id,x,y\\n")
>>> input_file_problem(root / "cores.csv", root=root) is None
True
>>> os.mkfifo(root / "pipe.csv")
>>> input_file_problem(root / "pipe.csv", root=root).message
'is not a regular file (a FIFO)'
>>> input_file_problem(root / "cores.csv", root=root / "sub").message
'names a file outside the project folder'
"""

from __future__ import annotations

import os
import stat
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError, Problem

__all__ = [
    "MAX_INPUT_BYTES",
    "FileProblem",
    "input_file_problem",
    "read_input_bytes",
]

MAX_INPUT_BYTES = 512 * 1024 * 1024
"""Largest input file paleomap reads, in bytes (512 MiB: far above any core table)."""

_KINDS = (
    (stat.S_ISFIFO, "a FIFO"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISSOCK, "a socket"),
)


@dataclass(frozen=True)
class FileProblem:
    """Why an input file is refused: ``message`` and ``hint`` for the problem record."""

    message: str
    hint: str


def input_file_problem(
    path: str | os.PathLike,
    *,
    root: str | os.PathLike | None = None,
    allow_outside: bool = False,
    max_bytes: int = MAX_INPUT_BYTES,
) -> FileProblem | None:
    """Check, without opening it, that an input file may be read; None when it may.

    Parameters
    ----------
    path : path-like
        The file.
    root : path-like, optional
        The project folder; the file must lie inside it unless ``allow_outside``.
        None skips that check (the project file itself, named by the user).
    allow_outside : bool
        The user allowed input files outside the project folder.
    max_bytes : int
        Size limit.

    Returns
    -------
    FileProblem or None

    Examples
    --------
    >>> input_file_problem("/dev/zero").message
    'is not a regular file (a character device)'
    """
    path = Path(path)
    try:
        st = os.stat(path)
    except FileNotFoundError:
        return FileProblem("file not found", "check the path")
    except (OSError, ValueError) as exc:  # a NUL byte, a name too long, no permission
        return FileProblem(
            f"cannot be read: {getattr(exc, 'strerror', None) or type(exc).__name__}",
            "check the path and its permissions",
        )
    if stat.S_ISDIR(st.st_mode):
        return FileProblem("is a folder, not a file", "give the path of the file itself")
    if not stat.S_ISREG(st.st_mode):
        kind = next((name for test, name in _KINDS if test(st.st_mode)), "a special file")
        return FileProblem(f"is not a regular file ({kind})", "paleomap reads only ordinary files")
    if st.st_size > max_bytes:
        return FileProblem(
            f"is larger than the {_size(max_bytes)} paleomap reads ({_size(st.st_size)})",
            "check that the path names the right file",
        )
    if root is not None and not allow_outside:
        real = Path(os.path.realpath(path))
        folder = Path(os.path.realpath(root))
        if folder != real and folder not in real.parents:
            return FileProblem(
                "names a file outside the project folder",
                "keep the inputs in the project file's folder or below it, or allow files "
                "elsewhere with --allow-outside-inputs",
            )
    if path.suffix.lower() == ".shp":
        # GDAL opens the companion files too; each must be an ordinary file as well.
        for sibling in sorted(path.parent.glob(path.stem + ".*")):
            if sibling != path:
                problem = input_file_problem(
                    sibling, root=root, allow_outside=allow_outside, max_bytes=max_bytes
                )
                if problem is not None:
                    return FileProblem(f"{sibling.name} {problem.message}", problem.hint)
    return None


def _size(n: int) -> str:
    if n >= 2**20:
        return f"{n / 2**20:,.0f} MiB"
    if n >= 2**10:
        return f"{n / 2**10:,.0f} KiB"
    return f"{n} bytes"


def read_input_bytes(
    path: str | os.PathLike,
    *,
    shown: str | None = None,
    root: str | os.PathLike | None = None,
    allow_outside: bool = False,
    max_bytes: int = MAX_INPUT_BYTES,
) -> bytes:
    """Read an input file after :func:`input_file_problem`, never blocking, never past the limit.

    Parameters
    ----------
    path : path-like
    shown : str, optional
        The file's name in messages.
    root, allow_outside, max_bytes
        As for :func:`input_file_problem`.

    Returns
    -------
    bytes

    Raises
    ------
    InputError
        The file is refused, or cannot be read; the message names the file, never its
        content.

    Examples
    --------
    >>> try:
    ...     read_input_bytes("/dev/zero")
    ... except InputError as exc:
    ...     print(exc.problems[0].message)
    is not a regular file (a character device)
    """
    shown = shown or str(path)

    def refuse(problem: FileProblem) -> InputError:
        return InputError([Problem(shown, None, None, None, problem.message, problem.hint)])

    problem = input_file_problem(path, root=root, allow_outside=allow_outside, max_bytes=max_bytes)
    if problem is not None:
        raise refuse(problem)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(path, flags)
    except OSError as exc:
        problem = FileProblem(f"cannot be read: {exc.strerror}", "check its permissions")
        raise refuse(problem) from None
    with os.fdopen(fd, "rb") as fh:
        st = os.fstat(fh.fileno())
        if not stat.S_ISREG(st.st_mode):  # swapped for something else since the check
            raise refuse(FileProblem("is not a regular file", "paleomap reads only ordinary files"))
        data = fh.read(max_bytes + 1)
    if len(data) > max_bytes:
        raise refuse(
            FileProblem(
                f"is larger than the {_size(max_bytes)} paleomap reads",
                "check that the path names the right file",
            )
        )
    return data
