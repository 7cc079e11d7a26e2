"""File names for names the user chose (slices, transects): distinct, stable and safe.

A name keeps only ASCII letters, digits, ``.``, ``_`` and ``-``, at most
:data:`MAX_STEM` characters of it, with no leading dot. When that changes the name in
any way, or the name has a capital letter, a short hash of the whole name is appended,
so two names never share a file (``S 1`` and ``S_1``, ``Ω`` and ``Δ``, two long names
with one beginning, ``s1`` and ``S1`` on a file system that ignores case) and the same
name always gives the same file. Names a system reserves for devices (``con``,
``nul``, ...) get the hash as well.

Examples
--------
>>> safe_name("mfs_2")
'mfs_2'
>>> safe_name("S 1"), safe_name("S_1")
('S_1-7eec045c', 'S_1-7f37d047')
>>> safe_name("Ω")
'slice-e3c622e5'
"""

from __future__ import annotations

import hashlib
import re

__all__ = ["MAX_STEM", "safe_name"]

MAX_STEM = 48
"""Longest part of a name kept in a file name (the hash comes on top)."""

# Device names Windows reserves in any folder, with any extension (common practice).
_RESERVED = {"con", "prn", "aux", "nul"} | {f"{p}{i}" for p in ("com", "lpt") for i in range(10)}


def _has_capital(text: str) -> bool:
    return any("A" <= c <= "Z" for c in text)


def safe_name(name: str, *, fallback: str = "slice") -> str:
    """A stem for file names made from ``name``; distinct names give distinct stems.

    Parameters
    ----------
    name : str
        The user's name (any text).
    fallback : str
        Stem used when nothing of ``name`` is left (the hash is appended).

    Returns
    -------
    str

    Examples
    --------
    >>> safe_name("MFS 2 / upper")
    'MFS_2_upper-1850f1fa'
    >>> safe_name("../../etc")
    'etc-74ccf3c5'
    """
    text = str(name)
    slug = re.sub(r"[^A-Za-z0-9._-]+", "_", text).strip("_.")[:MAX_STEM].strip("_.")
    reserved = slug.split(".")[0].lower() in _RESERVED
    if slug and slug == text and not _has_capital(slug) and not reserved:
        return slug
    digest = hashlib.sha256(text.encode("utf-8", "surrogatepass")).hexdigest()[:8]
    return f"{slug or fallback}-{digest}"
