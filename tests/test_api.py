"""The public API: ``from dxftruss import check`` and friends, and the run's policy.

The drawing is the frame of tests/test_hostile.py (closed-form forces there).
"""

from __future__ import annotations

import gc
import json
import subprocess
import sys
from pathlib import Path

import pytest

import dxftruss
from dxftruss.report.json import to_json

from .test_hostile import forces_by_layer, frame_doc


def test_every_public_name_resolves() -> None:
    for name in dxftruss.__all__:
        assert getattr(dxftruss, name) is not None, name
    with pytest.raises(AttributeError):
        dxftruss.no_such_name  # noqa: B018 - the lookup is the test


def test_import_is_light() -> None:
    # `dxftruss --help` and `import dxftruss` must not pay for numpy, scipy or ezdxf
    code = "import sys, dxftruss; print(sorted(m for m in ('numpy', 'scipy', 'ezdxf') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_check_from_python_equals_the_command_line(tmp_path: Path) -> None:
    path = tmp_path / "frame.dxf"
    frame_doc().saveas(path)
    res = dxftruss.check(path, dxftruss.Settings())
    assert isinstance(res, dxftruss.Result)
    got = forces_by_layer(json.loads(to_json(res)))
    assert got["CHORD"] == pytest.approx([4.0, 4.0]) and got["RAFTER"] == pytest.approx([-5.0, -5.0])
    out = subprocess.run(  # noqa: PLW1510 - the exit status is not the point here
        [sys.executable, "-m", "dxftruss", "check", str(path), "--json", "-", "--quiet"], capture_output=True, text=True
    )
    cli = json.loads(out.stdout)
    assert cli["cases"] == json.loads(to_json(res))["cases"]


def test_check_runs_under_the_policy_and_restores_it(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # what the stages see: no cyclic gc and one BLAS thread (the command line's policy)
    from threadpoolctl import threadpool_info

    from dxftruss import pipeline

    seen: dict[str, object] = {}
    real = pipeline.analyse_part

    def spy(*args: object, **kw: object):  # type: ignore[no-untyped-def]
        seen["gc"] = gc.isenabled()
        seen["threads"] = {p["num_threads"] for p in threadpool_info() if p["user_api"] == "blas"}
        return real(*args, **kw)

    monkeypatch.setattr(pipeline, "analyse_part", spy)
    for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        monkeypatch.delenv(var, raising=False)
    path = tmp_path / "frame.dxf"
    frame_doc().saveas(path)
    before = {p["filepath"]: p["num_threads"] for p in threadpool_info()}
    assert gc.isenabled()
    dxftruss.check(path)
    assert seen["gc"] is False and seen["threads"] == {1}
    assert gc.isenabled()
    assert {p["filepath"]: p["num_threads"] for p in threadpool_info()} == before
