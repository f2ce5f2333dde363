"""Reading a large loads file on the second core while the drawing is read.

A loads file of tens of thousands of tables takes a third of a second to parse and
does not depend on the drawing, so :func:`start` hands it to a child interpreter
(``python -c`` importing only :mod:`dxftruss.loadsfile`) that sends back the parsed
:class:`LoadsSpec` pickled on its standard output. :meth:`Pending.result` gives that
spec, or parses the file in this process when the child could not answer for any
reason (no interpreter, an import failure, a bad file: the error the user sees is
always this process's own ConfigError, the same as without the child). Files under
:data:`MIN_BYTES` are parsed in this process at once: a child costs more than they do.
"""

from __future__ import annotations

import contextlib
import os
import pickle
import subprocess
import sys
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .loadsfile import LoadsSpec

#: below this size a loads file is parsed in this process
MIN_BYTES = 256 * 1024

_CHILD = (
    "import pickle, sys\n"
    "sys.path.insert(0, sys.argv[1])\n"
    "from dxftruss.loadsfile import read_loads_file\n"
    "try:\n"
    "    spec = read_loads_file(sys.argv[2])\n"
    "except Exception:\n"
    "    sys.exit(3)\n"
    "sys.stdout.buffer.write(pickle.dumps(spec, protocol=pickle.HIGHEST_PROTOCOL))\n"
)


class Pending:
    """A loads file being read: :meth:`result` waits for it."""

    def __init__(
        self, path: str | os.PathLike[str], child: subprocess.Popen[bytes] | None, spec: LoadsSpec | None = None
    ) -> None:
        self.path = path
        self.child = child
        self.spec = spec

    def result(self) -> LoadsSpec:
        from .loadsfile import LoadsSpec, read_loads_file

        if self.spec is not None:
            return self.spec
        child, self.child = self.child, None
        if child is not None:
            try:
                out, _ = child.communicate()
                if child.returncode == 0:
                    spec = pickle.loads(out)
                    if isinstance(spec, LoadsSpec) and spec.path == str(self.path):
                        return spec
            except Exception:  # noqa: BLE001, S110 - any failure of the child: parse here instead
                pass
            finally:
                _stop(child)
        return read_loads_file(self.path)

    def cancel(self) -> None:
        """Stop the child (the check ended before the loads were needed)."""
        child, self.child = self.child, None
        if child is not None:
            _stop(child)


def _stop(child: subprocess.Popen[bytes]) -> None:
    if child.poll() is None:
        child.kill()
    with contextlib.suppress(subprocess.TimeoutExpired, ValueError, OSError):
        child.communicate(timeout=5)


#: children started before the analysis modules were imported, by path, for start()
_early: dict[str, Pending] = {}


def _big(path: str | os.PathLike[str]) -> bool:
    try:
        return os.stat(path).st_size >= MIN_BYTES
    except OSError:
        return False  # read_loads_file reports it


def _child(path: str | os.PathLike[str]) -> Pending:
    package_parent = str(Path(__file__).resolve().parent.parent)
    try:
        child = subprocess.Popen(
            [sys.executable, "-c", _CHILD, package_parent, os.fspath(path)],
            stdin=subprocess.DEVNULL,
            stdout=subprocess.PIPE,
            stderr=subprocess.DEVNULL,
        )
    except OSError:
        return Pending(path, None)
    return Pending(path, child)


def start_early(path: str | os.PathLike[str]) -> None:
    """Start the child for a large loads file now, before this process imports the
    analysis (a third of a second the child need not wait); :func:`start` takes it. A
    small file is left to :func:`start`, which reads it at once as before."""
    key = os.fspath(path)
    if key not in _early and sys.executable and _big(path):
        _early[key] = _child(path)


def forget_early() -> None:
    """Stop the children :func:`start` did not take (the check ended before it)."""
    while _early:
        _early.popitem()[1].cancel()


def start(path: str | os.PathLike[str]) -> Pending:
    """Start reading ``path`` (or take the child :func:`start_early` started). A small
    file is read at once (its ConfigError raised here, as before the drawing is read);
    a failure to start the child leaves the file to :meth:`Pending.result`."""
    from .loadsfile import read_loads_file

    early = _early.pop(os.fspath(path), None)
    if early is not None:
        return early
    if not _big(path) or not sys.executable:
        return Pending(path, None, read_loads_file(path))
    return _child(path)
