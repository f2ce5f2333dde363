"""Robustness of dxftruss.read on real DXF files written by many CAD programs.

The corpus (38 files with a manifest of their source, version and whether ezdxf reads
them directly or only with its recovery reader) lives outside the repository in
``../shared/corpus/realdxf``; this module is skipped when it is absent. Every file must
either be read (finite line work) or be refused with one InputError / LimitError line -
never a traceback, a hang, or output to the terminal.

References used here are outside the code under test: the manifest's own per-file
facts (entity counts and loader results recorded by the corpus author), and ezdxf's
own block expansion (``recursive_decompose``) for files with block references.
"""

from __future__ import annotations

import json
import logging
import math
import os
import signal
from collections import Counter
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from dxftruss.errors import InputError, LimitError
from dxftruss.findings import Code
from dxftruss.read import LineWork, read_drawing

CORPUS = Path(os.environ.get("DXFTRUSS_CORPUS", Path(__file__).resolve().parents[2] / "shared/corpus/realdxf"))

if not (CORPUS / "manifest.json").is_file():
    pytest.skip(f"real DXF corpus not found at {CORPUS}", allow_module_level=True)

MANIFEST: dict[str, dict[str, Any]] = {
    f["file"]: f for f in json.loads((CORPUS / "manifest.json").read_text())["files"]
}
FILES = sorted(p.name for p in CORPUS.glob("*.dxf"))

#: seconds one file may take before the test fails instead of hanging CI
TIME_BUDGET_S = 60

LINE_WORK_TYPES = {"LINE", "LWPOLYLINE", "POLYLINE", "INSERT"}


class _Timeout(Exception):
    pass


@pytest.fixture()
def time_budget() -> Iterator[None]:
    """Fail (not hang) when reading one file takes longer than TIME_BUDGET_S."""
    if not hasattr(signal, "SIGALRM"):  # pragma: no cover - not on Windows
        yield
        return

    def on_alarm(signum: int, frame: Any) -> None:
        raise _Timeout(f"reading took longer than {TIME_BUDGET_S} s")

    previous = signal.signal(signal.SIGALRM, on_alarm)
    signal.alarm(TIME_BUDGET_S)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def read_or_refuse(name: str) -> LineWork | InputError | LimitError:
    try:
        return read_drawing(CORPUS / name)
    except (InputError, LimitError) as err:
        return err


def test_manifest_lists_every_file() -> None:
    assert sorted(MANIFEST) == FILES
    assert len(FILES) == 38


@pytest.mark.parametrize("name", FILES)
def test_read_or_refuse_cleanly(name: str, time_budget: None, capfd: pytest.CaptureFixture[str]) -> None:
    capfd.readouterr()
    result = read_or_refuse(name)
    out, err = capfd.readouterr()
    assert (out, err) == ("", ""), "the reader must not print (library warnings go into findings)"

    info = MANIFEST[name]
    if isinstance(result, (InputError, LimitError)):
        msg = str(result)
        assert "\n" not in msg and name in msg
        # manifest: refused files are exactly the ones no ezdxf loader could open, and the
        # damaged ones from which the recovery reader brings back no line work at all
        line_work = {"LINE", "LWPOLYLINE", "POLYLINE", "INSERT"} & set(info["msp_entity_counts"] or {})
        assert not info["readfile_ok"] and (not info["recover_ok"] or not line_work)
        return

    lw = result
    assert isinstance(lw, LineWork)
    n = len(lw.segments)
    assert lw.segments.shape == (n, 4)
    assert lw.segments.dtype == np.float64
    assert np.isfinite(lw.segments).all()
    assert len(lw.handles) == len(lw.layers) == n
    assert all(isinstance(h, str) for h in lw.handles)
    for m in lw.supports:
        assert math.isfinite(m.x) and math.isfinite(m.y)
    for t in lw.texts:
        assert math.isfinite(t.x) and math.isfinite(t.y)
    assert isinstance(lw.dxf_version, str) and lw.dxf_version.startswith("AC")
    for f in lw.findings:
        json.dumps(f.data)  # findings data must be JSON-serialisable
        assert "\n" not in f.message

    # manifest: files only the recovery reader can open come back marked as recovered
    if not info["readfile_ok"] and info["recover_ok"]:
        assert lw.recovered
        assert Code.RECOVERED_FILE in [f.code for f in lw.findings]
    if info["readfile_ok"]:
        assert not lw.recovered


def test_unreadable_file_is_refused() -> None:
    # manifest: neither ezdxf loader opens this one (a binary DXF with a broken sentinel)
    refused = [n for n, f in MANIFEST.items() if not f["readfile_ok"] and not f["recover_ok"]]
    assert refused == ["dxfrs_diamond-bin_crlf_damaged.dxf"]
    with pytest.raises(InputError):
        read_drawing(CORPUS / refused[0])


LINES_ONLY = [
    n
    for n, f in MANIFEST.items()
    if f["msp_entity_counts"] and LINE_WORK_TYPES & set(f["msp_entity_counts"]) == {"LINE"}
]


@pytest.mark.parametrize("name", sorted(LINES_ONLY))
def test_line_count_matches_manifest(name: str, time_budget: None) -> None:
    # manifest msp_entity_counts (recorded by the corpus author): every model-space LINE
    # is one segment or one invalid-coordinate finding (no corpus file uses the
    # reserved SUPPORT* / LOAD* layers)
    lw = read_drawing(CORPUS / name)
    invalid = sum(f.data["count"] for f in lw.findings if f.code is Code.INVALID_COORDINATE)
    assert len(lw.segments) + invalid == MANIFEST[name]["msp_entity_counts"]["LINE"]


WITH_BLOCKS = sorted(
    n
    for n, f in MANIFEST.items()
    if f["readfile_ok"]
    and "INSERT" in (f["msp_entity_counts"] or {})
    and len(LINE_WORK_TYPES & set(f["msp_entity_counts"])) > 1  # some line work besides the INSERTs
)


def _reference_segments(path: Path) -> list[tuple[float, float, float, float]]:
    """Straight segments by ezdxf's own expansion of all block references.

    recursive_decompose also breaks up DIMENSION etc. (docs/methods.md, Library behaviour), so only the
    line work types are fed to it; spline-fit polylines and meshes are curves and
    surfaces, and repeated polyline vertices draw nothing, as in the reader.
    """
    import ezdxf
    from ezdxf.disassemble import recursive_decompose

    logging.getLogger("ezdxf").disabled = True
    try:
        doc = ezdxf.readfile(path)
        out = []
        for e in recursive_decompose(doc.modelspace().query("LINE LWPOLYLINE POLYLINE INSERT")):
            t = e.dxftype()
            if t == "LINE":
                out.append((e.dxf.start.x, e.dxf.start.y, e.dxf.end.x, e.dxf.end.y))
            elif t in ("LWPOLYLINE", "POLYLINE"):
                if t == "POLYLINE" and (e.dxf.flags & 4 or e.is_polygon_mesh or e.is_poly_face_mesh):
                    continue
                for v in e.virtual_entities():
                    if v.dxftype() == "LINE" and v.dxf.start != v.dxf.end:
                        out.append((v.dxf.start.x, v.dxf.start.y, v.dxf.end.x, v.dxf.end.y))
        return out
    finally:
        logging.getLogger("ezdxf").disabled = False


def _undirected(rows: Any, digits: int = 6) -> Counter[tuple[float, ...]]:
    out: Counter[tuple[float, ...]] = Counter()
    for x1, y1, x2, y2 in np.round(np.asarray(rows, dtype=float).reshape(-1, 4), digits).tolist():
        a, b = (x1 + 0.0, y1 + 0.0), (x2 + 0.0, y2 + 0.0)
        out[a + b if a <= b else b + a] += 1
    return out


@pytest.mark.parametrize("name", WITH_BLOCKS)
def test_block_expansion_matches_ezdxf(name: str, time_budget: None) -> None:
    path = CORPUS / name
    lw = read_drawing(path)
    ref = _reference_segments(path)
    assert _undirected(lw.segments) == _undirected(ref)
