"""Load labels drawn on the sheet: the grammar (dxftruss.labels) and its use end to end.

Expected values are computed with pint (an independent unit converter) from the
label's meaning as an engineer reads it; the constants are checked against NIST SP 811
(2008), Appendix B.8/B.9. Every misreading of the old label parser has a row here and
an end-to-end test through dxftruss.pipeline.check.
"""

from __future__ import annotations

import json
import math

import pint
import pytest

from dxftruss.cli import main
from dxftruss.errors import ConfigError
from dxftruss.findings import Code, Severity
from dxftruss.labels import KIP, LBF, STANDARD_GRAVITY, comma_style, read_label
from dxftruss.pipeline import Settings, check
from tests.drawings import write_drawing

U = pint.UnitRegistry()


def si(value: float, unit: str) -> float:
    """``value unit`` in SI base units (N, N/m or Pa) by pint."""
    return float(U.Quantity(value, unit).to_base_units().magnitude)


def test_constants_match_nist_sp811():
    # NIST SP 811 (2008) B.8: 1 lbf = 4.448 222 N; the exact value is the international
    # pound 0.45359237 kg times standard gravity 9.80665 m/s2 (CGPM 1901)
    assert STANDARD_GRAVITY == 9.80665
    assert pytest.approx(0.45359237 * 9.80665, rel=1e-15) == LBF
    assert round(LBF, 6) == 4.448222
    assert pytest.approx(1000 * 0.45359237 * 9.80665, rel=1e-15) == KIP
    assert pytest.approx(si(1, "lbf"), rel=1e-14) == LBF  # pint agrees


# (label, kind, expected SI magnitude from pint as (value, pint unit) or None, negative, n_assumptions)
FORMS = [
    # numbers
    ("12 kN", "force", (12, "kN"), False, 0),
    ("12.5 kN", "force", (12.5, "kN"), False, 0),
    (".5 kN", "force", (0.5, "kN"), False, 0),
    ("1.2e3 N", "force", (1200, "N"), False, 0),
    ("1/2 kip", "force", (0.5, "kip"), False, 0),  # old parser: 1 kip
    ("1 1/2 kip", "force", (1.5, "kip"), False, 0),
    ("1-1/2 kip", "force", (1.5, "kip"), False, 0),  # US habit for mixed fractions
    ("12 000 N", "force", (12000, "N"), False, 0),
    ("12\u00a0000 N", "force", (12000, "N"), False, 0),  # no-break space as digit group
    ("1 250 000 N", "force", (1250000, "N"), False, 0),
    ("12,5 kN", "force", (12.5, "kN"), False, 0),  # a comma before one digit can only be decimal
    ("1,250.5 lbf", "force", (1250.5, "lbf"), False, 0),  # group with a decimal point
    ("1,250,000 N", "force", (1250000, "N"), False, 0),
    ("12 000,5 N", "force", (12000.5, "N"), False, 0),
    # force units, any case
    ("12 N", "force", (12, "N"), False, 0),
    ("12 daN", "force", (120, "N"), False, 0),
    ("12 KN", "force", (12, "kN"), False, 0),
    ("12kn", "force", (12, "kN"), False, 0),
    ("1.2 MN", "force", (1.2, "MN"), False, 0),
    ("900 lbf", "force", (900, "lbf"), False, 0),
    ("12000 lb", "force", (12000, "lbf"), False, 0),  # old parser: 12000 kN
    ("12 LBS", "force", (12, "lbf"), False, 0),
    ("12K", "force", (12, "kip"), False, 0),  # old parser: 1
    ("12 KIP", "force", (12, "kip"), False, 0),  # old parser: 12 kN
    ("12 k", "force", (12, "kip"), False, 0),  # old parser: 12 kN
    ("12.0 KIPS", "force", (12, "kip"), False, 0),  # old parser: 12 kN
    ("2 tf", "force", (2, "metric_ton_force"), False, 0),
    ("150 kgf", "force", (150, "kgf"), False, 0),
    # names and values
    ("P1 = 12 kN", "force", (12, "kN"), False, 0),  # old parser: 1
    ("T17 12kN", "force", (12, "kN"), False, 0),
    ("W: 3.2 kN", "force", (3.2, "kN"), False, 0),
    ("12 kN (snow)", "force", (12, "kN"), False, 0),
    ("LC-2: 4 kip", "force", (4, "kip"), False, 0),
    ("DL - 12 kN", "force", (12, "kN"), False, 0),
    ("P2\n18 kN", "force", (18, "kN"), False, 0),  # two-line MTEXT
    # masses through standard gravity, with a warning
    ("1200 kg", "force", (1200 * 9.80665, "N"), False, 1),  # old parser: 1200 kN
    ("2 t", "force", (2000 * 9.80665, "N"), False, 1),
    ("2 tonne", "force", (2000 * 9.80665, "N"), False, 1),
    # bare numbers: the default unit, with a warning
    ("12", "force", (12, "kN"), False, 1),
    ("P3 = 7.5", "force", (7.5, "kN"), False, 1),
    # signs: read as a magnitude, flagged
    ("-12 kN", "force", (12, "kN"), True, 0),  # old parser: -12 kN reversed the arrow
    ("P = \u221212 kN", "force", (12, "kN"), True, 0),  # U+2212 minus sign
    ("+12 kN", "force", (12, "kN"), False, 0),
    ("- 12 kN", "force", (12, "kN"), True, 0),  # a minus set apart is still a sign
    ("\u2013 12 kN", "force", (12, "kN"), True, 0),  # en dash used as a minus
    # distributed: recognised and converted, never a joint force
    ("0.75 kN/m", "per-length", (0.75, "kN/m"), False, 0),  # old parser: 0.75 kN
    ("2 N/mm", "per-length", (2, "N/mm"), False, 0),
    ("300 plf", "per-length", (300, "lbf/ft"), False, 0),
    ("300 lb/ft", "per-length", (300, "lbf/ft"), False, 0),
    ("1.2 klf", "per-length", (1.2, "kip/ft"), False, 0),
    ("1.2 kip/ft", "per-length", (1.2, "kip/ft"), False, 0),
    ("1.2 k/ft", "per-length", (1.2, "kip/ft"), False, 0),
    ("5 kN/m2", "per-area", (5, "kN/m**2"), False, 0),
    ("5 kN/m\u00b2", "per-area", (5, "kN/m**2"), False, 0),
    ("5 kPa", "per-area", (5, "kPa"), False, 0),
    ("25 psf", "per-area", (25, "lbf/ft**2"), False, 0),
    ("0.5 ksf", "per-area", (0.5, "kip/ft**2"), False, 0),
]


@pytest.mark.parametrize(("text", "kind", "expected", "negative", "n_assumptions"), FORMS, ids=[f[0] for f in FORMS])
def test_label_forms(text, kind, expected, negative, n_assumptions):
    r = read_label(text, default_force_unit="kN")
    assert r.kind == kind, r.problem
    assert r.value == pytest.approx(si(*expected), rel=1e-12)
    assert r.negative is negative
    assert len(r.assumptions) == n_assumptions, r.assumptions


UNCLEAR = [
    ("12 T", "tonne"),  # old parser: 12 kN
    ("12 ton", "short ton"),
    ("12 TONS", "short ton"),
    ("12 mN", "millinewton"),
    ("12,000 lbs", "digit group"),  # old parser: 12 lbf; the comma is undecided alone
    ("1,250 kN", "decimal comma"),
    ("2 x 6 kN", "2 numbers"),
    ("12 kN (2.7 kip)", "2 numbers"),
    ("1 250 kN", "2 numbers"),  # a four-digit space group is too easily "case 1, 250 kN"
    ("2x6 kN", "not a unit"),
    ("12 snow", "not a unit"),
    ("12 kN.m", "not a unit"),  # a moment is not a force
    ("12#", "'#'"),
    ("12 kN @ 3 m", "'@'"),
    ("6+6 kN", "'+'"),
    ("(kN) 12", "not next to the number"),
    ("load", "no number"),
    ("", "no number"),
    ("3/0 kN", "divides by zero"),
    ("1e999 kN", "too large"),
    ("9" * 400 + "/2 kN", "too large"),  # the quotient overflows a float
    ("9" * 400 + " 1/2 kN", "too large"),  # so does the whole part of a mixed number
    ("9" * 5000 + "/2 kN", "too large"),  # more digits than Python converts to an int
]


@pytest.mark.parametrize(("text", "why"), UNCLEAR, ids=[u[0][:40] or "empty" for u in UNCLEAR])
def test_unclear_labels_are_never_guessed(text, why):
    r = read_label(text)
    assert r.kind == "unclear" and r.value is None
    assert why in r.problem
    assert "write" in r.problem or "divides" in r.problem or "too large" in r.problem  # says what to do


def test_bare_number_takes_the_default_unit_and_says_so():
    r = read_label("900", default_force_unit="lbf")
    assert r.value == pytest.approx(si(900, "lbf"), rel=1e-12) and r.unit == "lbf"
    assert "lbf" in r.assumptions[0]
    r = read_label("1200 kg")
    assert "9.80665" in r.assumptions[0] and "mass" in r.assumptions[0]


def test_comma_style_is_decided_by_the_drawing():
    assert comma_style(["12,5 kN", "1,250 kN"]) == "decimal"
    assert comma_style(["1,250.5 lbf", "12,000 lbs"]) == "group"
    assert comma_style(["2,500,000 N"]) == "group"
    assert comma_style(["1,250 kN", "12.5 kN"]) is None  # a decimal point alone decides nothing
    assert comma_style(["12,5 kN", "1,250.5 kN"]) is None  # contradictory: nothing decided
    assert comma_style(["P1,2"]) is None  # "P1" is a name
    # the same label reads differently by the drawing's style
    assert read_label("12,000 lbs", comma="group").value == pytest.approx(si(12000, "lbf"), rel=1e-12)
    assert read_label("1,250 kN", comma="decimal").value == pytest.approx(1250.0, rel=1e-12)
    # a form that contradicts the drawing's style is unclear
    assert read_label("12,5 kN", comma="group").kind == "unclear"
    assert read_label("1,250.5 kN", comma="decimal").kind == "unclear"


# ---------------------------------------------------------------------- end to end
#        (2, 2)
#        /    \        a triangle, 4 m span; pin at (0, 0), roller at (4, 0);
#  (0, 0)------(4, 0)  the drawn load points down at the apex
TRIANGLE = [(0.0, 0.0, 4.0, 0.0), (0.0, 0.0, 2.0, 2.0), (2.0, 2.0, 4.0, 0.0)]
SUPPORTS = [(0.0, 0.0, "XY"), (4.0, 0.0, "Y")]


def run(tmp_path, labels, loads_toml=None, layer="LOAD", supports=SUPPORTS):
    loads = [(2.0, 4.0, 2.0, 2.0, labels[0], layer)] + [
        (4.0 + 3 * i, 5.0, 4.0, 0.0, t, layer) for i, t in enumerate(labels[1:], 1)
    ]
    dxf = write_drawing(tmp_path / "t.dxf", TRIANGLE, supports=supports, loads=loads[:1])
    if len(labels) > 1:  # extra labels far from the load line, to set the comma style
        import ezdxf

        doc = ezdxf.readfile(dxf)
        for i, t in enumerate(labels[1:]):
            text = doc.modelspace().add_text(t, dxfattribs={"layer": layer, "height": 0.2})
            text.set_placement((50.0 + 10 * i, 50.0))
        doc.saveas(dxf)
    settings = Settings()
    if loads_toml is not None:
        (tmp_path / "l.toml").write_text(loads_toml)
        settings = Settings(loads=str(tmp_path / "l.toml"))
    return check(dxf, settings)


def vertical_reaction(result, case="main"):
    c = next(c for c in result.cases if c.name == case)
    return sum(ry for _, _, ry in c.reactions)


def codes(result):
    return {f.code for f in result.findings}


E2E_READ = [
    ("12K", 12 * 4.4482216152605),  # 12 kip in kN (NIST SP 811 B.8)
    ("12 KIP", 12 * 4.4482216152605),
    ("12 k", 12 * 4.4482216152605),
    ("12.0 KIPS", 12 * 4.4482216152605),
    ("1200 kg", 1200 * 9.80665 / 1000),
    ("12000 lb", 12000 * 4.4482216152605 / 1000),
    ("P1 = 12 kN", 12.0),
    ("1/2 kip", 0.5 * 4.4482216152605),
]


@pytest.mark.parametrize(("label", "kn"), E2E_READ, ids=[e[0] for e in E2E_READ])
def test_drawn_labels_are_read_as_an_engineer_reads_them(tmp_path, label, kn):
    r = run(tmp_path, [label])
    # the supports carry the whole downward load (equilibrium of the free body)
    assert vertical_reaction(r) == pytest.approx(kn, rel=1e-12)
    (load,) = r.truss.cases[0].loads
    assert load.label == label and load.fy == pytest.approx(-kn, rel=1e-12)


def test_mass_label_is_a_warning_that_names_gravity(tmp_path):
    r = run(tmp_path, ["1200 kg"])
    (f,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_ASSUMPTION]
    assert f.severity is Severity.WARNING and "1200 kg" in f.message and "9.80665" in f.message
    assert not r.has_errors


@pytest.mark.parametrize("label", ["12 T", "0.75 kN/m", "12,000 lbs", "2 x 6 kN", "load"])
def test_unclear_drawn_label_leaves_the_case_unsolved(tmp_path, label):
    r = run(tmp_path, [label])
    (f,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_UNCLEAR]
    assert f.severity is Severity.ERROR and r.has_errors
    assert f"'{label}'" in f.message and "not solved" in f.message
    (c,) = r.cases
    assert c.solved_parts == () and all(math.isnan(x) for x in c.forces) and c.reactions == ()


def test_per_length_label_says_to_use_the_loads_file(tmp_path):
    r = run(tmp_path, ["0.75 kN/m"])
    (f,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_UNCLEAR]
    assert "750.0 N/m" in f.message and "loads file" in f.message


def test_comma_decided_by_another_label_in_the_drawing(tmp_path):
    r = run(tmp_path, ["12,000 lbs", "1,250.5 lbs"])
    assert vertical_reaction(r) == pytest.approx(12000 * 4.4482216152605 / 1000, rel=1e-12)
    r = run(tmp_path, ["12,000 lbs", "12,5 kN"])  # a decimal comma elsewhere: 12.000 lbf
    assert vertical_reaction(r) == pytest.approx(12 * 4.4482216152605 / 1000, rel=1e-12)


def test_minus_sign_does_not_reverse_the_drawn_arrow(tmp_path):
    r = run(tmp_path, ["-12 kN"])
    assert vertical_reaction(r) == pytest.approx(12.0, rel=1e-12)  # the arrow points down
    (f,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_ASSUMPTION]
    assert "minus sign" in f.message


def test_bare_number_takes_the_loads_file_unit(tmp_path):
    r = run(tmp_path, ["900"], loads_toml='[units]\nforce = "lbf"\n')
    assert vertical_reaction(r) == pytest.approx(900.0, rel=1e-12)
    (f,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_ASSUMPTION]
    assert "lbf" in f.message


def test_label_text_is_escaped_in_the_finding(tmp_path):
    r = run(tmp_path, ["12 T\x1b[2J"])
    (f,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_UNCLEAR]
    assert "\x1b" not in f.message and "\\x1b" in f.message


def test_unclear_label_exit_1_and_reports_say_not_solved(tmp_path, capsys):
    dxf = write_drawing(tmp_path / "t.dxf", TRIANGLE, supports=SUPPORTS, loads=[(2.0, 4.0, 2.0, 2.0, "12 T", "LOAD")])
    out = tmp_path / "r.json"
    assert main(["check", str(dxf), "--json", str(out), "--quiet"]) == 1
    doc = json.loads(out.read_text())
    (case,) = doc["cases"]
    assert case["solved_parts"] == [] and all(v is None for v in case["forces"].values())
    assert "load-label-unclear" in {f["code"] for f in doc["findings"]}
    assert main(["check", str(dxf), "--json", str(tmp_path / "r2.json")]) == 1
    assert "not solved" in capsys.readouterr().out


def test_unclear_label_blocks_the_combinations_that_use_its_case(tmp_path):
    toml = (
        '[[load]]\nat = [2, 2]\nfx = 1\ncase = "wind"\n\n'
        '[[combination]]\nname = "all"\nfactors = { main = 1.0, wind = 1.0 }\n'
    )
    r = run(tmp_path, ["12 T"], loads_toml=toml)
    by = {c.name: c for c in r.cases}
    assert by["main"].solved_parts == () and by["all"].solved_parts == ()
    assert by["wind"].solved_parts == (0,)
    (f,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_UNCLEAR]
    assert "'all'" in f.message


def test_json_loads_name_their_label(tmp_path):
    load = (2.0, 4.0, 2.0, 2.0, "P1 = 12 kN", "LOAD")
    dxf = write_drawing(tmp_path / "t.dxf", TRIANGLE, supports=SUPPORTS, loads=[load])
    out = tmp_path / "r.json"
    assert main(["check", str(dxf), "--json", str(out), "--quiet"]) == 0
    (ld,) = json.loads(out.read_text())["cases"][0]["loads"]
    assert ld["label"] == "P1 = 12 kN" and ld["source"] == "drawing" and ld["fy"] == pytest.approx(-12.0)


# ----------------------------------------------------------- drawn and file loads
FILE_LOAD = "[[load]]\nat = [2, 2]\nfy = -5\n"


def test_drawn_and_file_loads_in_one_case_are_refused(tmp_path):
    with pytest.raises(ConfigError) as err:  # today's code summed them: 17 kN
        run(tmp_path, ["12 kN"], loads_toml=FILE_LOAD)
    msg = str(err.value)
    assert "'main'" in msg and "1 drawn" in msg and "1 in the loads file" in msg and "[drawn] loads" in msg


def test_drawn_and_file_loads_exit_2(tmp_path, capsys):
    dxf = write_drawing(tmp_path / "t.dxf", TRIANGLE, supports=SUPPORTS, loads=[(2.0, 4.0, 2.0, 2.0, "12 kN", "LOAD")])
    (tmp_path / "l.toml").write_text(FILE_LOAD)
    assert main(["check", str(dxf), "--loads", str(tmp_path / "l.toml"), "--json", "-"]) == 2
    assert "main" in capsys.readouterr().err


def test_drawn_loads_add_or_ignore(tmp_path):
    r = run(tmp_path, ["12 kN"], loads_toml='[drawn]\nloads = "add"\n' + FILE_LOAD)
    assert vertical_reaction(r) == pytest.approx(17.0, rel=1e-12)
    r = run(tmp_path, ["12 kN"], loads_toml='[drawn]\nloads = "ignore"\n' + FILE_LOAD)
    assert vertical_reaction(r) == pytest.approx(5.0, rel=1e-12)


def test_drawn_and_file_loads_in_different_cases_need_no_key(tmp_path):
    r = run(tmp_path, ["12 kN"], loads_toml=FILE_LOAD.replace("fy = -5", 'fy = -5\ncase = "snow"'))
    assert vertical_reaction(r, "main") == pytest.approx(12.0) and vertical_reaction(r, "snow") == pytest.approx(5.0)


def test_different_supports_drawn_and_in_the_file_are_refused(tmp_path):
    toml = '[[support]]\nat = [4, 0]\nfix = "xy"\n'
    with pytest.raises(ConfigError) as err:
        run(tmp_path, ["12 kN"], loads_toml=toml)
    msg = str(err.value)
    assert "J3" in msg and "roller (y)" in msg and "pin (xy)" in msg and "[drawn] supports" in msg
    r = run(tmp_path, ["12 kN"], loads_toml='[drawn]\nsupports = "add"\n' + toml)
    assert {(s.joint, s.fix.value) for s in r.truss.supports} == {(0, "xy"), (2, "xy")}
    r = run(tmp_path, ["12 kN"], loads_toml='[drawn]\nsupports = "ignore"\n[[support]]\nat = [4, 0]\nfix = "x"\n')
    assert {(s.joint, s.fix.value) for s in r.truss.supports} == {(0, "xy"), (2, "x")}
    # the same restraint drawn and given: nothing to decide
    r = run(tmp_path, ["12 kN"], loads_toml='[[support]]\nat = [4, 0]\nfix = "y"\n')
    assert {(s.joint, s.fix.value) for s in r.truss.supports} == {(0, "xy"), (2, "y")}


@pytest.mark.parametrize("bad", ['[drawn]\nloads = "sum"\n', '[drawn]\nlabels = "add"\n', 'drawn = "add"\n'])
def test_drawn_table_is_checked(tmp_path, bad):
    with pytest.raises(ConfigError, match=r"\[drawn\]"):
        run(tmp_path, ["12 kN"], loads_toml=bad)


# ------------------------------------------------------------------ any text at all
from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_PIECES = st.sampled_from(
    [
        "12",
        "1,250",
        "12,5",
        ".5",
        "1/2",
        "1 1/2",
        "-",
        "+",
        " ",
        "kN",
        "K",
        "T",
        "t",
        "kg",
        "/m",
        "m2",
        "P1",
        "=",
        "(",
        ")",
        "e3",
        "12 000",
        "\x1b",
        "\u202e",
        "\u00a0",
        "lbs",
        "kip",
        "ton",
        "#",
        "x",
        "\n",
        "0",
        "/0",
        "9" * 400,
    ]
)


@settings(max_examples=400, deadline=None)
@given(st.lists(_PIECES, max_size=8).map("".join), st.sampled_from([None, "decimal", "group"]))
def test_any_text_reads_or_is_unclear(text, comma):
    r = read_label(text, comma=comma)
    assert r.kind in ("force", "per-length", "per-area", "unclear")
    if r.kind == "unclear":
        assert r.value is None and r.problem
    else:
        assert r.value is not None and math.isfinite(r.value) and r.value >= 0 and r.problem is None


@settings(max_examples=200, deadline=None)
@given(st.text(max_size=40))
def test_arbitrary_unicode_never_raises(text):
    r = read_label(text)
    assert (r.kind == "unclear") == (r.value is None)
    comma_style([text, text[::-1]])


def test_ignored_drawn_loads_are_not_read(tmp_path):
    # the file's loads replace the drawn ones of that case, so the drawn label cannot block it
    r = run(tmp_path, ["12 T"], loads_toml='[drawn]\nloads = "ignore"\n' + FILE_LOAD)
    assert vertical_reaction(r) == pytest.approx(5.0, rel=1e-12)
    assert Code.LOAD_LABEL_UNCLEAR not in codes(r) and not r.has_errors
