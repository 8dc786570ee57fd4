"""Atomic output: write to a temporary file beside the target, then ``os.replace``.

A reader never sees a half-written PDF, and on any error the temporary file is removed, so no
partial output is left behind.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from sedreport.errors import SedreportError


def _umask_mode() -> int:
    """Permission bits a plain ``open(..., "w")`` would give under the current umask."""
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


@contextmanager
def atomic_output(path: str | os.PathLike[str]) -> Iterator[Path]:
    """Yield a temporary path in ``path``'s directory; move it onto ``path`` on success.

    Parameters
    ----------
    path : path-like
        Final output file. Its directory must exist.

    Raises
    ------
    SedreportError
        When the output directory does not exist or is not writable.
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise SedreportError(f"{target}: output directory {folder} does not exist")
    if target.is_dir():
        raise SedreportError(f"{target}: is a directory, not an output file")
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=folder)
    except OSError as exc:
        raise SedreportError(f"{target}: cannot write in {folder} ({exc.strerror})") from exc
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        yield tmp
        try:
            os.chmod(tmp, _umask_mode())  # mkstemp makes 0600; give what open() would
            os.replace(tmp, target)
        except OSError as exc:
            raise SedreportError(f"{target}: cannot write the output ({exc.strerror})") from exc
    finally:
        if tmp.exists():
            tmp.unlink()
