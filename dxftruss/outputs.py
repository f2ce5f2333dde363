"""Safe output files: never over the input drawing, always written atomically."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Callable

from .errors import ConfigError, OutputError


def same_file(a: str | os.PathLike[str], b: str | os.PathLike[str]) -> bool:
    pa, pb = Path(a), Path(b)
    try:
        if pa.exists() and pb.exists():
            return os.path.samefile(pa, pb)
    except OSError:
        pass
    try:
        return pa.resolve() == pb.resolve()
    except (OSError, RuntimeError):  # a symlink loop, say: cannot be the same file we read
        return False


def check_output_path(out: str | os.PathLike[str], inputs: list[str | os.PathLike[str]], what: str) -> None:
    """Refuse an output path that is one of the input files or a directory."""
    for inp in inputs:
        if same_file(out, inp):
            raise ConfigError(f"{out}: refusing to write the {what} over an input file")
    if Path(out).is_dir():
        raise ConfigError(f"{out}: is a directory, give a file name for the {what}")
    folder = Path(out).parent
    if not folder.is_dir():
        raise ConfigError(f"{out}: the folder {str(folder)!r} does not exist (for the {what})")


def write_atomic(path: str | os.PathLike[str], write: Callable[[str], None]) -> None:
    """Call ``write(tmp_path)``, then rename the temporary file over ``path``.

    A crash while writing leaves the previous file at ``path`` untouched.
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write here ({exc.strerror or exc})") from None
    os.close(fd)
    try:
        write(tmp)
        os.replace(tmp, target)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise OutputError(f"{path}: cannot write the report ({exc.strerror or exc})") from None
        raise
