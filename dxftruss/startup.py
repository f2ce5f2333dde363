"""The process around a run: standard streams and the DXF library's settings files.

Glossary:
    standard streams  descriptors 0, 1 and 2. A closed one is given /dev/null before
                      anything is opened, so a report file can never become descriptor
                      1 and receive the summary; after a closed pipe, standard output is
                      pointed at /dev/null so the interpreter's last flush cannot fail.
    settings file     the INI files the DXF library (ezdxf) reads when it is imported:
                      ``$XDG_CONFIG_HOME/ezdxf/ezdxf.ini`` (or ``~/.config/...``),
                      ``./ezdxf.ini`` and ``$EZDXF_CONFIG_FILE``. One it would fail on is
                      refused in one line before the library is imported.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path


def open_standard_streams() -> None:
    """Give a closed standard input, output or error /dev/null, so that no report file
    ever opens as descriptor 1 or 2 and receives the summary."""
    for fd in (0, 1, 2):
        try:
            os.fstat(fd)
        except OSError:
            try:
                got = os.open(os.devnull, os.O_RDWR)
                if got != fd:
                    os.dup2(got, fd)
                    os.close(got)
            except OSError:
                pass
    for name, mode in (("stdin", "r"), ("stdout", "w"), ("stderr", "w")):
        if getattr(sys, name) is None:
            setattr(sys, name, open(os.devnull, mode))  # noqa: SIM115 - stays open as the stream


def silence_stdout() -> None:
    """After a closed pipe: no further write (nor the interpreter's last flush) may fail."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass


def library_settings_files() -> list[Path]:
    """The settings files the DXF library (ezdxf) reads when it is imported, in its order."""
    xdg = os.environ.get("XDG_CONFIG_HOME")
    try:
        home = Path(xdg).expanduser() if xdg else Path("~").expanduser() / ".config"
        paths = [home / "ezdxf" / "ezdxf.ini"]
    except RuntimeError:  # no home folder at all: the library cannot read one either
        paths = []
    paths.append(Path("ezdxf.ini"))
    if os.environ.get("EZDXF_CONFIG_FILE"):
        paths.append(Path(os.environ["EZDXF_CONFIG_FILE"]))
    return paths


def check_library_settings() -> None:
    """Refuse, in one line, a settings file the DXF library would fail on at import (it
    prints three lines and exits 1 for a file that is not UTF-8, and raises for one that
    is not an INI file). A file it cannot open it skips, and so do we."""
    import configparser
    import errno

    from .errors import ConfigError

    for path in library_settings_files():
        try:
            os.stat(path)
        except OSError as exc:  # the library asks Path.exists(), which fails on anything else
            if exc.errno in (errno.ENOENT, errno.ENOTDIR, errno.EBADF, errno.ELOOP):
                continue
            raise ConfigError(
                f"{path}: the DXF library looks for its settings file here and cannot ({exc.strerror}); "
                "make the folder readable or set XDG_CONFIG_HOME to a readable folder"
            ) from None
        try:
            with open(path, "rb") as fh:
                data = fh.read(1 << 20)
        except OSError:
            continue
        try:
            configparser.ConfigParser().read_string(data.decode("utf-8"), source=str(path))
        except (UnicodeDecodeError, configparser.Error) as exc:
            why = "not UTF-8 text" if isinstance(exc, UnicodeDecodeError) else type(exc).__name__
            raise ConfigError(
                f"{path}: the DXF library's settings file cannot be read ({why}); fix or remove it"
                + (" or unset EZDXF_CONFIG_FILE" if str(path) == os.environ.get("EZDXF_CONFIG_FILE") else "")
            ) from None
