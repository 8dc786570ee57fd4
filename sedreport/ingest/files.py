"""Locating, hashing and decoding the data files named in ``session.yaml``.

Rules (DESIGN.md "The session folder"): every data file lives inside the session folder; an
absolute path, a ``..`` component or a symbolic link that resolves outside the folder is refused.
Files are read once as bytes; the SHA-256 is taken over the bytes as stored (compressed bytes for
``.gz``), then gzip is undone (by magic bytes or suffix) and the text decoded as strict UTF-8.
"""

from __future__ import annotations

import gzip
import hashlib
import zlib
from dataclasses import dataclass
from pathlib import Path, PurePosixPath, PureWindowsPath

from sedreport.errors import SessionError

#: First two bytes of every gzip member (RFC 1952, section 2.3.1).
GZIP_MAGIC = b"\x1f\x8b"


@dataclass(frozen=True)
class RawFile:
    """One input file read from disk.

    Attributes
    ----------
    path : Path
        Resolved absolute path.
    rel : str
        Path relative to the session folder, as written in ``session.yaml``.
    data : bytes
        Bytes as stored.
    sha256 : str
        Hex SHA-256 of ``data``.
    """

    path: Path
    rel: str
    data: bytes
    sha256: str


def resolve_inside(folder: Path, rel: object, where: str) -> tuple[Path, str]:
    """Resolve ``rel`` against ``folder``, refusing anything that leaves the folder.

    Parameters
    ----------
    folder : Path
        The session folder.
    rel : object
        The ``file:`` value from ``session.yaml``.
    where : str
        Location for error messages (``<session>/session.yaml:<field>``).

    Returns
    -------
    (Path, str)
        Resolved path and the relative path as written.
    """
    if not isinstance(rel, str) or not rel.strip():
        raise SessionError(where, f"must be a relative file name, got {rel!r}")
    text = rel.strip()
    if any(ord(ch) < 32 or ord(ch) == 127 for ch in text):
        raise SessionError(where, f"file name {text!r} contains control characters")
    if (
        PurePosixPath(text).is_absolute()
        or PureWindowsPath(text).is_absolute()
        or (PureWindowsPath(text).drive)
    ):
        raise SessionError(
            where,
            f"absolute path {text!r} not allowed; data files must be inside the session folder",
        )
    parts = text.replace("\\", "/").split("/")
    if ".." in parts:
        raise SessionError(
            where, f"path {text!r} contains '..'; data files must be inside the session folder"
        )
    root = folder.resolve()
    target = (root / text).resolve()
    if not target.is_relative_to(root):
        raise SessionError(where, f"{text!r} resolves outside the session folder (symbolic link?)")
    return target, text


def read_file(path: Path, rel: str, session: str) -> RawFile:
    """Read a data file's bytes and hash them; a missing or unreadable file is an error."""
    where = f"{session}/{rel}"
    if not path.exists():
        raise SessionError(where, "file not found")
    if not path.is_file():
        raise SessionError(where, "not a regular file")
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise SessionError(where, f"cannot read file ({exc.strerror})") from None
    return RawFile(path=path, rel=rel, data=data, sha256=hashlib.sha256(data).hexdigest())


def is_gzip(raw: RawFile) -> bool:
    """True when the file is gzip-compressed by magic bytes or by its ``.gz`` suffix."""
    return raw.data[:2] == GZIP_MAGIC or raw.rel.lower().endswith(".gz")


def decode_text(raw: RawFile, session: str) -> str:
    """Decompress (if gzip) and decode the file as UTF-8 (an initial BOM is dropped).

    Raises
    ------
    SessionError
        Zero bytes, a broken gzip stream, bytes that are not UTF-8 (naming the line) or NUL
        characters (naming the line).
    """
    where = f"{session}/{raw.rel}"
    data = raw.data
    if not data:
        raise SessionError(where, "file is empty (0 bytes)")
    if is_gzip(raw):
        if data[:2] != GZIP_MAGIC:
            raise SessionError(where, "named .gz but is not a gzip file (magic bytes missing)")
        try:
            data = gzip.decompress(data)
        except (OSError, EOFError, zlib.error) as exc:
            raise SessionError(where, f"broken gzip data ({exc})") from None
        if not data:
            raise SessionError(where, "file is empty after gzip decompression")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        raise SessionError(
            f"{where}:{line}",
            f"bytes that are not UTF-8 (0x{data[exc.start]:02x} at byte {exc.start})",
        ) from None
    nul = text.find("\x00")
    if nul >= 0:
        raise SessionError(
            f"{where}:{text.count(chr(10), 0, nul) + 1}", "NUL character in text file"
        )
    return text
