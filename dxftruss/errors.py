"""The few exceptions dxftruss raises.

An exception means a stage cannot produce its output at all; anything the user must
know but that lets the work go on is a :class:`~dxftruss.findings.Finding` instead.
Every exception here maps to exit status 2 in the command line.
"""

from __future__ import annotations


class DxftrussError(Exception):
    """Base class: the input could not be used. ``str(err)`` is one line for people."""


class InputError(DxftrussError):
    """The drawing cannot be read (missing, not DXF, damaged beyond recovery)."""


class ConfigError(DxftrussError):
    """An option or the loads file is wrong (syntax, unknown key, bad unit or value)."""


class LimitError(DxftrussError):
    """The drawing exceeds a safety limit (entity count, block depth, array size)."""


class OutputError(DxftrussError):
    """A report could not be written (missing folder, permission, disk full)."""
