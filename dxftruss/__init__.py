"""dxftruss: check truss line drawings (DXF) before analysis or fabrication.

The public API::

    from dxftruss import check, Settings

    result = check("roof.dxf", Settings(loads="roof.toml", units="mm"))
    for part, st in zip(result.truss.parts, result.stability):
        print(part.index + 1, st.verdict.value)
    for f in result.findings:
        print(f.severity.value, f.code.value, f.message)

:func:`check` runs every stage under the same policy as the command line (no cyclic
garbage collection during the run, one BLAS thread) and returns a :class:`Result`;
the reports take one (``dxftruss.report.json.to_json``, ``dxftruss.report.pdf.write_pdf``,
``dxftruss.report.dxf.write_dxf``, ``dxftruss.report.text.summary``). Bad input raises a
:class:`DxftrussError` subclass whose ``str()`` is one line for people.

Names are loaded on first use, so ``import dxftruss`` (and ``dxftruss --help``) stays
fast.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"

#: public name -> module that defines it
_EXPORTS = {
    "check": "pipeline",
    "run_policy": "policy",
    "Settings": "result",
    "Result": "result",
    "SourceInfo": "result",
    "Tolerances": "result",
    "Finding": "findings",
    "Code": "findings",
    "Severity": "findings",
    "Verdict": "audit.stability",
    "PartStability": "audit.stability",
    "CaseResult": "statics",
    "Truss": "model",
    "DxftrussError": "errors",
    "InputError": "errors",
    "ConfigError": "errors",
    "LimitError": "errors",
    "OutputError": "errors",
}

__all__ = [
    "CaseResult",
    "Code",
    "ConfigError",
    "DxftrussError",
    "Finding",
    "InputError",
    "LimitError",
    "OutputError",
    "PartStability",
    "Result",
    "Settings",
    "Severity",
    "SourceInfo",
    "Tolerances",
    "Truss",
    "Verdict",
    "__version__",
    "check",
    "run_policy",
]
assert set(__all__) == {"__version__", *_EXPORTS}

if TYPE_CHECKING:
    from .audit.stability import PartStability, Verdict
    from .errors import ConfigError, DxftrussError, InputError, LimitError, OutputError
    from .findings import Code, Finding, Severity
    from .model import Truss
    from .pipeline import check
    from .policy import run_policy
    from .result import Result, Settings, SourceInfo, Tolerances
    from .statics import CaseResult


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'dxftruss' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
