"""Finding messages and next steps over a set of faulty drawings of our own:
every error has a next step, and every length or force in a message carries its unit.

The unit check reads the words after each number (docs/findings.md: lengths carry the
drawing unit, forces the force unit). Allowed without a unit: ids (J12, M3, part 2,
mode 1, handle 2F), counts of things ("3 members", "2 of 5 lines"), dimensionless
factors ("about 1.2e+04 times", "singular value 3.1e-05"), and text quoted from the file.
"""

import re
from pathlib import Path

import ezdxf
import pytest

import dxftruss
from dxftruss.findings import Code, Severity
from dxftruss.result import Settings
from dxftruss.units import FORCE_UNITS, LENGTH_UNITS, PER_AREA_UNITS, PER_LENGTH_UNITS
from tests.drawings import pratt_segments, write_drawing
from tests.test_inclined_supports import triangle_doc
from tests.test_line_loads import drawn, row
from tests.test_next_steps import SUPPORTS, _gapped
from tests.test_outlines import BOTTOM, _drawing, studio_truss


def _sloppy(tmp_path: Path) -> Path:
    """The Pratt truss with the usual slips, each on its own:

    - the top chord's first panel drawn twice, a 1 um stub line at the far end
    - a support point 0.6 m beside L3 (no joint there), a load line floating above the truss
    - a load at U2 with no label, one at U4 labelled "12 T" (tonne or short ton?)
    """
    segs = [*pratt_segments(), (0.0, 3.0, 4.0, 3.0), (24.0, 0.0, 24.0 + 1e-6, 0.0)]
    loads = [
        (30.0, 8.0, 30.0, 6.0, "5 kN", "LOAD"),
        (8.0, 4.0, 8.0, 3.0, None, "LOAD-wind"),
        (16.0, 4.0, 16.0, 3.0, "12 T", "LOAD-snow"),
    ]
    supports = [*SUPPORTS, (12.6, 0.0, "Y")]
    return write_drawing(tmp_path / "sloppy.dxf", segs, supports=supports, loads=loads)


def _kinked(tmp_path: Path) -> Path:
    """A triangle whose bottom chord has a nearly straight joint at mid-span (kink 0.25 mrad)."""
    segs = [(0.0, 0.0, 4.0, 0.001), (4.0, 0.001, 8.0, 0.0), (8.0, 0.0, 4.0, 3.0), (4.0, 3.0, 0.0, 0.0)]
    return write_drawing(tmp_path / "kinked.dxf", segs, supports=[(0.0, 0.0, "XY"), (8.0, 0.0, "Y")], units=0)


def _odd_entities(tmp_path: Path) -> Path:
    """A triangle with a line that runs off to 1e13 m, a bulged polyline and a line with z."""
    doc = ezdxf.new("R2013")
    doc.units = 6
    msp = doc.modelspace()
    for a, b in (((0, 0), (8, 0)), ((8, 0), (4, 3)), ((4, 3), (0, 0))):
        msp.add_line(a, b, dxfattribs={"layer": "TRUSS"})
    msp.add_line((0, 0), (1e13, 0), dxfattribs={"layer": "TRUSS"})
    msp.add_lwpolyline([(0, 0, 0, 0, 0.5), (8, 0, 0, 0, 0)], format="xyseb", dxfattribs={"layer": "TRUSS"})
    msp.add_line((4, 3, 0.0), (4, 0, 0.25), dxfattribs={"layer": "TRUSS"})
    path = tmp_path / "odd.dxf"
    doc.saveas(path)
    return path


def _skewed_roller(tmp_path: Path) -> Path:
    doc = triangle_doc()
    outer = doc.blocks.new("HOLDER")
    outer.add_blockref("ROLLER", (0, 0), dxfattribs={"rotation": 30})
    doc.modelspace().add_blockref("HOLDER", (4, 0), dxfattribs={"layer": "SYMBOLS", "xscale": 1, "yscale": 3})
    path = tmp_path / "skew.dxf"
    doc.saveas(path)
    return path


def _twins(tmp_path: Path) -> Path:
    """Two copies of an open-panel truss side by side: disconnected, repeated, mechanisms."""
    base = [s for i, s in enumerate(pratt_segments(4)) if i != 2]
    far = [(x1 + 40.0, y1, x2 + 40.0, y2) for x1, y1, x2, y2 in base]
    return write_drawing(tmp_path / "twins.dxf", base + far)


def _nothing(tmp_path: Path) -> Path:
    doc = ezdxf.new("R2013")
    doc.modelspace().add_circle((0, 0), 1.0)
    path = tmp_path / "nothing.dxf"
    doc.saveas(path)
    return path


@pytest.fixture(scope="module")
def results(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("faulty")
    out = {}

    def run(name, path, **settings):
        out[name] = dxftruss.check(path, Settings(**settings))

    run("gapped", write_drawing(tmp / "gapped.dxf", _gapped(), supports=SUPPORTS))
    run("open", write_drawing(tmp / "open.dxf", [s for i, s in enumerate(pratt_segments()) if i != 2]))
    run("rollers", write_drawing(tmp / "rollers.dxf", pratt_segments(), supports=[(0, 0, "Y"), (24, 0, "Y")]))
    run("stray", write_drawing(tmp / "stray.dxf", [*pratt_segments(), (24.0, 3.0, 26.0, 4.0)], supports=SUPPORTS))
    run("sloppy", _sloppy(tmp))
    run("kinked", _kinked(tmp))
    run("odd", _odd_entities(tmp))
    run("skew", _skewed_roller(tmp))
    run("twins", _twins(tmp))
    run("nothing", _nothing(tmp))
    run("row", drawn(tmp, row()).source.path)
    bad_row = row()
    bad_row[3] = (bad_row[3][0] + 0.8, *bad_row[3][1:])
    run("bad row", drawn(tmp, bad_row, name="bad_row.dxf").source.path)
    known = studio_truss()
    run("outlines", _drawing(known, tmp / "outlines.dxf"))
    y = known.joints[0, 1] - BOTTOM / 2 - 60.0
    run("ambiguous", _drawing(known, tmp / "ambiguous.dxf", [((1000.0, y), (6200.0, y))]))
    return out


#: error codes these drawings must produce (each one's next step is checked)
EXPECTED_ERRORS = {
    Code.NO_MEMBERS,
    Code.INVALID_COORDINATE,
    Code.ZERO_LENGTH_MEMBER,
    Code.DUPLICATE_MEMBER,
    Code.DANGLING_MEMBER,
    Code.MECHANISM,
    Code.SUPPORT_OFF_JOINT,
    Code.LOAD_OFF_JOINT,
    Code.LOAD_WITHOUT_VALUE,
    Code.LOAD_LABEL_UNCLEAR,
    Code.LOAD_EXCITES_MECHANISM,
    Code.INCLINED_SUPPORT,
    Code.AMBIGUOUS_OUTLINE,
}


def _all(results):
    return [(name, f) for name, r in results.items() for f in r.findings]


def test_every_error_has_a_next_step(results):
    seen = set()
    for name, f in _all(results):
        if f.severity is Severity.ERROR:
            seen.add(f.code)
            assert f.next_step, f"{name}: {f.code.value} has no next step: {f.message}"
    assert seen >= EXPECTED_ERRORS, f"not produced: {sorted(c.value for c in EXPECTED_ERRORS - seen)}"


def test_near_miss_and_crossing_warnings_have_next_steps(results):
    warned = [f for _, f in _all(results) if f.code in (Code.NEAR_MISS, Code.UNJOINED_CROSSING, Code.ASSUMED_UNITS)]
    assert {f.code for f in warned} == {Code.NEAR_MISS, Code.UNJOINED_CROSSING, Code.ASSUMED_UNITS}
    assert all(f.next_step for f in warned)


_UNITS = {*LENGTH_UNITS, *FORCE_UNITS, *PER_LENGTH_UNITS, *PER_AREA_UNITS, "N/m", "degrees", "%", "kg", "lb", "drawing"}
#: words after an integer that make it a count or an ordinal
_COUNTED = re.compile(
    r"(?:more\b|of\b|in all\b|(?:separate |independent |drawn |load |member |DXF |end cut |outline |parallel "
    r"|arc |[A-Z]+ )?"
    r"(?:joint|member|line|part|entit|placement|mechanism|case|record|cell|segment|text|arrow|layer|"
    r"block|error|warning|pair|piece|reference|lines?\b|derived|group|candidate|time|height|"
    r"(?:rigid-body |internal )(?:motion|mechanism))\w*)"
)
#: words before a number that make it an id, an ordinal or a dimensionless value
_BEFORE = re.compile(
    r"(?:\bpart|\bmode|\bhandles?|\bcase|\blayout|\blimit of|\bfirst|\bsingular value|\bfactor|"
    r"\bthe first|\blisted|\$INSUNITS is|\bcode)\s*$"
)
_DIMENSIONLESS = re.compile(r"(?:times\b|x\b|of the largest)")
_NUMBER = re.compile(r"(?<![\w.#-])[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?(?![\w.])")
_QUOTED = re.compile(r"'[^']*'|\"[^\"]*\"")
_POINT = re.compile(r"\(\s*[-+.\deE]+,\s*[-+.\deE]+\s*\)\s*")  # "(x, y) unit": the unit follows the point


def unitless_numbers(text: str) -> list[str]:
    """The numbers in ``text`` with no unit after them and not allowed as ids, counts or
    dimensionless values: each as a short excerpt."""
    text = _QUOTED.sub("'...'", text)
    # a handle is an id, also an entity key inside blocks ("handle 45/43")
    text = re.sub(r"\bhandle (?:[0-9A-Fa-f]+/)+[0-9A-Fa-f]+", "handle H", text)
    text = _POINT.sub("0 ", text)  # a point is one length: its unit follows the closing bracket
    # Maxwell's count and the rank's s and k are counts (docs/methods.md)
    text = re.sub(r"m \+ r - [23]j = [-+=\d ]+|\b[sk] = \d+", "the count", text)
    bad = []
    for m in _NUMBER.finditer(text):
        after = text[m.end() :].lstrip()
        while (sep := re.match(r"(?:,|to\b)\s*", after)) and _NUMBER.match(after[sep.end() :]):
            after = after[sep.end() :]  # a list "0.1, 0.2 mm" or a range "0 to 0.25 m": the unit comes last
            after = after[_NUMBER.match(after).end() :].lstrip()
        word = re.match(r"[A-Za-z%/0-9]+", after)
        if word and word.group() in _UNITS:
            continue
        before = text[: m.start()]
        if _BEFORE.search(before) or _DIMENSIONLESS.match(after):
            continue
        integer = re.fullmatch(r"[-+]?\d+", m.group()) is not None
        if integer and (_COUNTED.match(after) or after[:1] in (")", "]", ";", ":") or not after):
            continue
        bad.append(text[max(0, m.start() - 30) : m.end() + 20])
    return bad


def test_every_length_and_force_in_a_message_has_its_unit(results):
    bad = []
    for name, f in _all(results):
        for field, text in (("message", f.message), ("next step", f.next_step)):
            bad += [f"{name}: {f.code.value} {field}: ...{x}..." for x in unitless_numbers(text)]
    assert not bad, "\n".join(bad)


@pytest.mark.parametrize(
    "text, ok",
    [
        ("J3 and J4 are 0.0360555 apart but not joined", False),
        ("J3 and J4 are 0.036 m apart but not joined", True),
        ("join J3 (4.00, 0.00) m and J4 (4.00, 3.00) m", True),
        ("join J3 (4.00, 0.00) and J4", False),
        ("3 drawn lines join J1 and J2", True),
        ("label '12 T' read as 12.0 kN", True),
        ("load of 12.5 along the arrow", False),
        ("member widths 45.0, 70.0 mm", True),
        ("part 2 has 3 more independent mechanisms not listed (5 in all)", True),
        ("forces reach about 1.2e+04 times the load", True),
        ("z of the line work ranges from 0 to 0.25", False),
        ("z of the line work ranges from 0 to 0.25 drawing units", True),
        ("J3 is 0.6 away", False),
    ],
)
def test_the_unit_check_itself(text, ok):
    assert (not unitless_numbers(text)) is ok
