"""The JSON report against its published JSON Schema (docs/report.schema.json).

Every golden case (tests/cases/*.dxf, with its .toml where present) and every sample
drawing (samples/*.dxf, with its .toml where present) is checked through the command
line and its report validated; so are reports of drawings built here to raise findings
of many kinds (topology errors, a mechanism, a near-miss, a near-mechanism, an empty
drawing). The schema is strict (``additionalProperties: false`` on every fixed object),
so a key the writer adds without documenting it fails here; the negative tests show
that the validator does reject such reports.
"""

from __future__ import annotations

import copy
import json
from pathlib import Path

import ezdxf
import pytest

from dxftruss.cli import main
from dxftruss.findings import Code
from dxftruss.pipeline import check
from dxftruss.report.json import SCHEMA, SCHEMA_VERSION, report_dict
from dxftruss.result import Settings

from .drawings import pratt_segments

jsonschema = pytest.importorskip("jsonschema")

ROOT = Path(__file__).resolve().parents[1]
DOCS = ROOT / "docs"
CASES = Path(__file__).parent / "cases"
SAMPLES = ROOT / "samples"
GOLDEN = sorted(p.stem for p in CASES.glob("*.dxf"))
SAMPLE_NAMES = sorted(p.stem for p in SAMPLES.glob("*.dxf"))


@pytest.fixture(scope="module")
def validator():
    schema = json.loads((DOCS / "report.schema.json").read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


def _errors(validator, doc) -> list[str]:
    return [f"{'/'.join(map(str, e.absolute_path))}: {e.message}" for e in validator.iter_errors(doc)]


def _run(folder: Path, name: str, tmp_path: Path) -> dict:
    """The JSON report of folder/name.dxf (with folder/name.toml when present), via the CLI."""
    out = tmp_path / f"{name}.json"
    args = ["check", str(folder / f"{name}.dxf"), "--json", str(out), "--quiet"]
    loads = folder / f"{name}.toml"
    if loads.exists():
        args += ["--loads", str(loads)]
    assert main(args) in (0, 1)
    return json.loads(out.read_text(encoding="utf-8"))


def test_inputs_exist():
    # guards the parametrised tests below against silently running on nothing
    assert len(GOLDEN) >= 3 and len(SAMPLE_NAMES) >= 4


@pytest.mark.parametrize("name", GOLDEN)
def test_golden_case_report_is_valid(name, tmp_path, validator):
    doc = _run(CASES, name, tmp_path)
    assert _errors(validator, doc) == []
    assert doc["schema"] == SCHEMA and doc["schema_version"] == SCHEMA_VERSION == 1


@pytest.mark.parametrize("name", SAMPLE_NAMES)
def test_sample_report_is_valid(name, tmp_path, validator):
    assert _errors(validator, _run(SAMPLES, name, tmp_path)) == []


# --------------------------------------------------------------------------- many kinds of findings


def _faulty_drawing(path: Path) -> Path:
    """A Pratt truss with planted slips, a loose open square and marks off their joints."""
    doc = ezdxf.new("R2013")
    doc.units = 0  # unitless: millimetres are assumed and said
    msp = doc.modelspace()
    segs = pratt_segments()
    segs += [(4, 0, 8, 0)]  # the second bottom panel drawn twice
    segs += [(30, 0, 34, 0), (34, 0, 34, 3), (34, 3, 30, 3), (30, 3, 30, 0)]  # open square, a part alone
    segs += [(24, 3, 26, 5)]  # hangs off the top corner
    segs += [(0, 0, 4, 3)]  # crosses the first diagonal without a joint
    segs += [(12, 3, 12, 3)]  # zero length
    segs += [(16, -0.05, 16, -2)]  # its end stops 0.05 below joint (16, 0)
    for x1, y1, x2, y2 in segs:
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "TRUSS"})
    msp.add_lwpolyline([(40, 0, 0, 0, 0.5), (44, 0)], format="xyseb", dxfattribs={"layer": "TRUSS"})
    # a 3-D line: a part in a plane of its own (the rest lies in z = 0), so the report
    # carries each part's plane; a support mark far off both planes is not used
    msp.add_line((50, 0, 0), (54, 0, 1), dxfattribs={"layer": "TRUSS"})
    msp.add_point((0, 30, 50), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_circle((10, 10), 1, dxfattribs={"layer": "NOTES"})
    msp.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point((24, 0), dxfattribs={"layer": "SUPPORT-Y"})
    msp.add_point((60, 60), dxfattribs={"layer": "SUPPORT-XY"})  # no joint near
    msp.add_line((8, 5), (8, 3), dxfattribs={"layer": "LOAD"})  # no label
    msp.add_line((70, 70), (70, 68), dxfattribs={"layer": "LOAD-wind"})  # no joint near
    msp.add_text("5 kN", dxfattribs={"layer": "LOAD-wind", "height": 0.2}).set_placement((70.1, 70))
    doc.saveas(path)
    return path


def _kinked_drawing(path: Path) -> Path:
    """Two 1 m members meeting 0.01 mm off the straight line, both ends pinned, 1 kN across."""
    doc = ezdxf.new("R2013")
    doc.units = 4
    msp = doc.modelspace()
    msp.add_line((0, 0), (1000, 0.01), dxfattribs={"layer": "TRUSS"})
    msp.add_line((1000, 0.01), (2000, 0), dxfattribs={"layer": "TRUSS"})
    for x in (0, 2000):
        msp.add_point((x, 0), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_line((1000, 300), (1000, 0.01), dxfattribs={"layer": "LOAD"})
    msp.add_text("1 kN", dxfattribs={"layer": "LOAD", "height": 20}).set_placement((1010, 300))
    doc.saveas(path)
    return path


def test_reports_with_many_kinds_of_findings_are_valid(tmp_path, validator):
    docs = {
        # every layer named: its planted faults are no triangulated structure and would be set aside
        "faulty": report_dict(check(_faulty_drawing(tmp_path / "faulty.dxf"), Settings(layers=("*",)))),
        "kinked": report_dict(check(_kinked_drawing(tmp_path / "kinked.dxf"))),
        "empty": report_dict(check(_empty(tmp_path / "empty.dxf"))),
    }
    for name, doc in docs.items():
        assert _errors(validator, doc) == [], name
    codes = {f["code"] for doc in docs.values() for f in doc["findings"]}
    # the drawings above were built to raise these (the point of the test: many shapes of finding)
    planted = {
        "arc-segment", "assumed-supports", "assumed-units", "dangling-member", "disconnected-part",
        "duplicate-member", "ignored-entity", "load-off-joint", "load-without-value", "mechanism",
        "near-miss", "support-off-joint", "unjoined-crossing", "unsupported-geometry", "zero-length-member",
        "near-mechanism", "no-members", "set-aside",
    }  # fmt: skip
    assert planted <= codes
    assert {f["severity"] for doc in docs.values() for f in doc["findings"]} == {"error", "warning", "info"}
    assert any("data" in f for f in docs["faulty"]["findings"])
    assert docs["empty"]["parts"] == [] and docs["empty"]["cases"] == []


def _empty(path: Path) -> Path:
    ezdxf.new("R2013").saveas(path)
    return path


# --------------------------------------------------------------------------- the schema can fail


@pytest.fixture(scope="module")
def good_report(tmp_path_factory):
    return _run(CASES, "pratt_drawn_loads", tmp_path_factory.mktemp("schema"))


def _mutations():
    def extra_top(d):
        d["undocumented"] = 1

    def extra_in_finding(d):
        d["findings"][0]["hint"] = "x"

    def extra_in_part(d):
        d["parts"][0]["colour"] = "red"

    def wrong_type(d):
        d["joints"][0]["x"] = "0.0"

    def missing_key(d):
        del d["schema_version"]

    def wrong_version(d):
        d["schema_version"] = 2

    def unknown_code(d):
        d["findings"][0]["code"] = "made-up-code"

    def bad_member_id(d):
        d["members"][0]["id"] = "B1"

    def data_not_object(d):
        d["findings"][0]["data"] = [1, 2]

    def force_as_text(d):
        first = next(iter(d["cases"][0]["forces"]))
        d["cases"][0]["forces"][first] = "12 kN"

    return [extra_top, extra_in_finding, extra_in_part, wrong_type, missing_key, wrong_version,
            unknown_code, bad_member_id, data_not_object, force_as_text]  # fmt: skip


@pytest.mark.parametrize("mutate", _mutations(), ids=lambda f: f.__name__)
def test_schema_rejects_a_changed_report(mutate, good_report, validator):
    assert _errors(validator, good_report) == []
    bad = copy.deepcopy(good_report)
    mutate(bad)
    assert _errors(validator, bad) != []


# --------------------------------------------------------------------------- the documents keep up with the code


def test_schema_lists_every_finding_code_and_severity(validator):
    finding = validator.schema["$defs"]["finding"]["properties"]
    assert set(finding["code"]["enum"]) == {c.value for c in Code}
    assert set(finding["severity"]["enum"]) == {c.severity.value for c in Code}


def test_findings_document_covers_every_code():
    text = (DOCS / "findings.md").read_text(encoding="utf-8")
    for c in Code:
        # one table row with the code and its severity, and a section of its own
        assert f"| `{c.value}` | {c.severity.value} |" in text, c.value
        assert f"### `{c.value}`" in text, c.value


def test_report_format_document_covers_every_top_level_key(good_report, validator):
    text = (DOCS / "report-format.md").read_text(encoding="utf-8")
    assert set(validator.schema["required"]) == set(good_report)
    for key in good_report:
        assert f"`{key}`" in text, key
