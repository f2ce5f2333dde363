"""Safe output files: never over an input, never into anything but a regular file, and a
drawing's reports replaced together.

Glossary:
    target      the file a report replaces: the path given, or, when that path is a
                symbolic link, the file the link points to (the link itself stays a link).
    temporary   ``.<name>.dxftruss-<run>-<random>.tmp`` in the target's folder; ``<run>``
                is the process id of the command that started the run, so the parent of
                a batch can find and remove what a stopped worker left behind.
    staged      a report written in full to its temporary and not yet renamed.
    commit      renaming every staged report of one drawing over its target, with
                interrupts held back; if one rename fails, the ones before it are put
                back (old content restored, new files removed).
"""

from __future__ import annotations

import contextlib
import errno
import os
import re
import stat
import tempfile
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from .errors import ConfigError, OutputError
from .escape import one_line

#: the id in every temporary of this run (the command's own process id, handed to workers)
RUN_ID = str(os.getpid())


def _why(exc: OSError) -> str:
    return exc.strerror or str(exc)


def same_file(a: str | os.PathLike[str], b: str | os.PathLike[str]) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        pass
    try:
        return os.path.realpath(a) == os.path.realpath(b)
    except (OSError, ValueError, RuntimeError):  # a symlink loop, say: cannot be a file we read
        return False


def output_target(out: str | os.PathLike[str], what: str) -> Path:
    """The regular file (existing or not) a report given as ``out`` will replace.

    A symbolic link is followed; a link to nothing, a loop, a directory, a device, a FIFO
    or a socket is refused with :class:`ConfigError`."""
    p = Path(out)
    try:
        is_link = p.is_symlink()
        real = Path(os.path.realpath(p)) if is_link else p
        try:
            st = os.stat(real)
        except FileNotFoundError:
            if is_link:
                raise ConfigError(
                    f"{one_line(out)}: is a symbolic link to a missing file; give a file name for the {what}"
                ) from None
            st = None
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            raise ConfigError(f"{one_line(out)}: symbolic link loop (for the {what})") from None
        raise ConfigError(f"{one_line(out)}: cannot use this name for the {what} ({_why(exc)})") from None
    if st is not None and not stat.S_ISREG(st.st_mode):
        kind = (
            "a directory"
            if stat.S_ISDIR(st.st_mode)
            else "a FIFO"
            if stat.S_ISFIFO(st.st_mode)
            else "a socket"
            if stat.S_ISSOCK(st.st_mode)
            else "a device"
            if stat.S_ISCHR(st.st_mode) or stat.S_ISBLK(st.st_mode)
            else "not a regular file"
        )
        raise ConfigError(f"{one_line(out)}: is {kind}; give a file name for the {what}")
    folder = real.parent if str(real.parent) else Path(".")
    if not folder.is_dir():
        raise ConfigError(f"{one_line(out)}: the folder {one_line(folder)!r} does not exist (for the {what})")
    if len(os.fsencode(real.name)) > _name_max(folder):
        raise ConfigError(f"{one_line(out)}: file name too long for the {what}")
    return real


def _name_max(folder: Path) -> int:
    try:
        return os.pathconf(folder, "PC_NAME_MAX")
    except (OSError, ValueError):
        return 255


def check_output_path(out: str | os.PathLike[str], inputs: list[str | os.PathLike[str]], what: str) -> Path:
    """Refuse an output path that is an input file or not a regular file; return its target."""
    for inp in inputs:
        if same_file(out, inp):
            raise ConfigError(f"{one_line(out)}: refusing to write the {what} over an input file")
    return output_target(out, what)


_UMASK: int | None = None


def umask() -> int:
    """The process's umask, read without changing it where the system allows
    (``/proc/self/status``); else set and restored at once, on the first call only."""
    global _UMASK
    try:
        with open("/proc/self/status", encoding="ascii", errors="replace") as fh:
            m = re.search(r"^Umask:\s*([0-7]+)", fh.read(), re.MULTILINE)
        if m is not None:
            return int(m.group(1), 8)
    except OSError:
        pass
    if _UMASK is None:
        old = os.umask(0o022)
        os.umask(old)
        _UMASK = old
    return _UMASK


#: temporaries this process has created and not yet renamed or removed
_LIVE: set[str] = set()


def _temp_in(folder: Path, name: str, kind: str = "") -> str:
    short = name[:80]  # the temporary's name must fit where the target's does
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{short}.dxftruss-{RUN_ID}-{kind}", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise OutputError(f"{one_line(folder / name)}: cannot write here ({_why(exc)})") from None
    os.close(fd)
    _LIVE.add(tmp)
    return tmp


def _remove(tmp: str) -> None:
    with contextlib.suppress(OSError):
        os.unlink(tmp)
    _LIVE.discard(tmp)


def remove_live_temporaries() -> None:
    """Remove every temporary this process still holds (an interrupt's last act)."""
    for tmp in list(_LIVE):
        _remove(tmp)


def remove_run_temporaries(folders: set[Path], run_id: str = RUN_ID) -> list[Path]:
    """Remove the temporaries of this run's stopped workers from ``folders``."""
    gone = []
    pat = re.compile(r"^\..*\.dxftruss-" + re.escape(run_id) + r"-.*\.tmp$", re.DOTALL)
    for folder in folders:
        try:
            names = os.listdir(folder)
        except OSError:
            continue
        for n in names:
            if pat.match(n):
                try:
                    os.unlink(folder / n)
                    gone.append(folder / n)
                except OSError:
                    pass
    return gone


@dataclass
class Staged:
    """One report written in full to ``tmp``, to be renamed over ``target``."""

    shown_as: str  # the path as the user gave it
    target: Path
    tmp: str


@dataclass
class OutputSet:
    """All reports of one drawing: stage each, then :meth:`commit` them together."""

    staged: list[Staged] = field(default_factory=list)

    def stage(self, path: str | os.PathLike[str], write: Callable[[str], object], what: str = "report") -> None:
        target = output_target(path, what)
        tmp = _temp_in(target.parent if str(target.parent) else Path("."), target.name)
        try:
            write(tmp)
            os.chmod(tmp, 0o666 & ~umask())
        except BaseException as exc:
            _remove(tmp)
            if isinstance(exc, OSError):
                raise OutputError(f"{one_line(path)}: cannot write the {what} ({_why(exc)})") from None
            raise
        self.staged.append(Staged(str(path), target, tmp))

    def discard(self) -> None:
        for s in self.staged:
            _remove(s.tmp)
        self.staged.clear()

    def commit(self) -> list[str]:
        """Rename every staged report over its target; interrupts wait until the set is
        complete (or rolled back). Returns the paths written, as the user gave them."""
        import signal

        held = {signal.SIGINT, signal.SIGTERM}
        try:
            old_mask = signal.pthread_sigmask(signal.SIG_BLOCK, held)
        except (AttributeError, ValueError, OSError):  # not the main thread, or no such call
            old_mask = None
        try:
            return self._commit()
        finally:
            if old_mask is not None:
                signal.pthread_sigmask(signal.SIG_SETMASK, old_mask)

    def _commit(self) -> list[str]:
        done: list[tuple[Staged, str | None, bool]] = []  # (report, link to the old content, old existed)
        try:
            for s in self.staged:
                backup = None
                existed = s.target.exists()
                if existed:
                    try:
                        backup = _temp_in(s.target.parent, s.target.name, "old-")
                        os.unlink(backup)
                        os.link(s.target, backup)
                    except (OSError, OutputError):  # no hard links here: no way back for this one
                        if backup:
                            _LIVE.discard(backup)
                        backup = None
                os.replace(s.tmp, s.target)
                _LIVE.discard(s.tmp)
                done.append((s, backup, existed))
        except OSError as exc:
            failed = s.shown_as
            kept = self._roll_back(done)
            for rest in self.staged:
                _remove(rest.tmp)
            msg = f"{one_line(failed)}: cannot write the report ({_why(exc)})"
            if kept:
                msg += "; already written and kept: " + ", ".join(one_line(k) for k in kept)
            elif done:
                msg += "; nothing was changed"
            raise OutputError(msg) from None
        for _, backup, _existed in done:
            if backup:
                _remove(backup)
        written = [s.shown_as for s in self.staged]
        self.staged.clear()
        return written

    @staticmethod
    def _roll_back(done: list[tuple[Staged, str | None, bool]]) -> list[str]:
        """Undo the renames in ``done``; return the ones that could not be undone."""
        kept = []
        for s, backup, existed in reversed(done):
            try:
                if backup:
                    os.replace(backup, s.target)
                    _LIVE.discard(backup)
                elif not existed:
                    os.unlink(s.target)
                else:  # the old content could not be saved (no hard links here): the new stays
                    kept.append(s.shown_as)
            except OSError:
                kept.append(s.shown_as)
        return kept


def write_atomic(path: str | os.PathLike[str], write: Callable[[str], object]) -> None:
    """Call ``write(tmp_path)``, then rename the temporary file over ``path``'s target.

    A crash while writing leaves the previous file untouched."""
    out = OutputSet()
    out.stage(path, write)
    out.commit()


def write_text_chunked(path: str | os.PathLike[str], text: str | list[str], chunk: int = 1 << 20) -> None:
    """``text`` (or the strings of a list, one after another) as UTF-8, undecodable
    bytes backslash-escaped, encoded a megabyte at a time: the same bytes as
    ``Path.write_text`` of the whole text, without a second copy of a large report."""
    texts = [text] if isinstance(text, str) else text
    with open(path, "w", encoding="utf-8", errors="backslashreplace") as f:
        f.writelines(t[i : i + chunk] for t in texts for i in range(0, len(t), chunk))
