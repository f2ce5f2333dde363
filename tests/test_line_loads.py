"""Line loads (loads file [[line_load]]/[[area_load]] and drawn rows of arrows), lumped to joints.

The trusses are a scenario of our own: a Pratt roof truss of 8 panels of 2.5 m, 2 m deep,
and a small triangular truss of 9 m span and 2.4 m rise.
"""

import json

import numpy as np
import pytest

from dxftruss.errors import ConfigError
from dxftruss.findings import Code
from dxftruss.loadsfile import parse_loads
from dxftruss.pipeline import Settings, check
from dxftruss.report.json import to_json

from .drawings import pratt_segments, write_drawing

N, A, H = 8, 2.5, 2.0  # panels, panel length (m), depth (m)
W = 3.0  # kN/m on the top chord


def loads_file(tmp_path, text, name="loads.toml"):
    p = tmp_path / name
    p.write_text(text)
    return str(p)


SUPPORTS = f'[[support]]\nat = [0, 0]\nfix = "xy"\n[[support]]\nat = [{N * A}, 0]\nfix = "y"\n'


def member(t, p, q):
    i = int(np.flatnonzero((np.abs(t.xy - p) < 1e-9).all(axis=1))[0])
    k = int(np.flatnonzero((np.abs(t.xy - q) < 1e-9).all(axis=1))[0])
    return int(np.flatnonzero((t.ends[:, 0] == min(i, k)) & (t.ends[:, 1] == max(i, k)))[0])


def pratt_with_top_load(tmp_path, extra=""):
    dxf = write_drawing(tmp_path / "pratt.dxf", pratt_segments(N, A, H))
    text = SUPPORTS + f'[[line_load]]\nfrom = [0, {H}]\nto = [{N * A}, {H}]\nw = "{W} kN/m"\ncase = "snow"\n' + extra
    return check(dxf, Settings(loads=loads_file(tmp_path, text)))


def test_uniform_top_chord_load_matches_method_of_sections(tmp_path):
    r = pratt_with_top_load(tmp_path)
    (case,) = r.cases
    t = r.truss

    # Closed form (derivation, method of sections): lumping w on the top chord gives w*a/2
    # at U0 and Un (straight down the end verticals into the supports) and w*a at U1..Un-1.
    # Reactions R = w*n*a/2. Free body left of a cut at x = k*a (loads at U0..Uk-1):
    #   M_k = R*k*a - (w*a/2)*k*a - sum_{i=1}^{k-1} w*a*(k-i)*a = w*a^2*k*(n-k)/2,
    # the simple-beam moment w*x*(L-x)/2 at the panel points. Cutting panel k (between
    # x=(k-1)a and ka): in the left half the diagonal runs U(k-1)-L(k), so moments about
    # L(k) and U(k-1) give top chord -M_k/h and bottom chord +M_(k-1)/h; in the right half
    # the diagonal runs L(k-1)-U(k): top chord -M_(k-1)/h, bottom chord +M_k/h.
    def m(k):
        return W * A**2 * k * (N - k) / 2

    worst = 0.0
    for k in range(1, N + 1):
        left = k <= N // 2
        top = case.forces[member(t, ((k - 1) * A, H), (k * A, H))]
        bottom = case.forces[member(t, ((k - 1) * A, 0), (k * A, 0))]
        want_top = -(m(k) if left else m(k - 1)) / H
        want_bottom = (m(k - 1) if left else m(k)) / H
        worst = max(worst, abs(top - want_top), abs(bottom - want_bottom))
    assert worst < 1e-9, worst
    # the moment at mid-span from the lumped loads by direct summation agrees with the closed form
    loads = t.cases[0].loads
    k = N // 2
    direct = W * N * A / 2 * k * A + sum(
        ld.fy * (k * A - t.xy[ld.joint, 0]) for ld in loads if t.xy[ld.joint, 0] < k * A
    )
    assert direct == pytest.approx(m(k), rel=1e-12)
    assert m(k) == pytest.approx(W * (N * A) ** 2 / 8, rel=1e-12)  # w L^2 / 8


def test_lumped_loads_tributary_lengths_and_totals(tmp_path):
    r = pratt_with_top_load(tmp_path)
    t = r.truss
    (lc,) = t.cases
    (ll,) = lc.line_loads
    shares = {(round(float(t.xy[j, 0]), 9)): (trib, fx, fy) for j, trib, fx, fy in ll.shares}
    assert shares[0.0] == pytest.approx((A / 2, 0.0, -W * A / 2))
    assert shares[A] == pytest.approx((A, 0.0, -W * A))
    assert ll.length == pytest.approx(N * A)
    # total = w x loaded length (the lumping keeps the resultant)
    assert ll.total == pytest.approx((0.0, -W * N * A), abs=1e-12)
    reactions = sum(ry for _, _, ry in r.cases[0].reactions)
    assert reactions == pytest.approx(W * N * A, rel=1e-12)
    doc = json.loads(to_json(r))
    (jc,) = doc["cases"]
    assert jc["line_load_total"]["fy"] == pytest.approx(-W * N * A)
    (jl,) = jc["line_loads"]
    assert jl["measured"] == "along" and jl["direction"] == "down"
    assert jl["defaults"] == ["measured", "direction"]
    assert sum(j["tributary_length"] for j in jl["joints"]) == pytest.approx(N * A)
    assert jl["w"] == pytest.approx(W * 1000)  # N/m
    from dxftruss.report.text import summary

    assert "case 'snow': 1 line load(s) lumped to 9 joints by tributary length, total (0, -60) kN" in summary(
        r, width=200
    )
    lumped = [f for f in r.findings if f.code is Code.LINE_LOAD_LUMPED]
    assert len(lumped) == 1 and lumped[0].severity.value == "warning"
    assert "by default" in lumped[0].message and "bend" in lumped[0].message


def test_area_load_is_q_times_spacing(tmp_path):
    dxf = write_drawing(tmp_path / "pratt.dxf", pratt_segments(N, A, H))
    top = f"from = [0, {H}]\nto = [{N * A}, {H}]\n"
    area = check(
        dxf,
        Settings(loads=loads_file(tmp_path, SUPPORTS + f'[[area_load]]\n{top}q = "0.6 kN/m2"\nspacing = "600 mm"\n')),
    )
    line = check(
        dxf, Settings(loads=loads_file(tmp_path, SUPPORTS + f'[[line_load]]\n{top}w = "0.36 kN/m"\n', "l.toml"))
    )
    # 0.6 kN/m2 x 0.6 m = 0.36 kN/m (arithmetic)
    fa, fl = area.truss.cases[0].load_vector(area.truss.n_joints), line.truss.cases[0].load_vector(line.truss.n_joints)
    assert np.abs(fa - fl).max() < 1e-12
    assert area.truss.cases[0].line_loads[0].total[1] == pytest.approx(-0.36 * N * A, rel=1e-12)
    assert np.abs(np.asarray(area.cases[0].forces) - np.asarray(line.cases[0].forces)).max() < 1e-9


# triangular truss: bottom L0 (0,0) L1 (3,0) L2 (6,0) L3 (9,0), rafter joints R1 (3,1.6),
# apex (4.5,2.4), R2 (6,1.6): the left rafter is 5.1 m long over 4.5 m horizontally
TRI = [
    (0, 0, 3, 0),
    (3, 0, 6, 0),
    (6, 0, 9, 0),
    (0, 0, 3, 1.6),
    (3, 1.6, 4.5, 2.4),
    (4.5, 2.4, 6, 1.6),
    (6, 1.6, 9, 0),
    (3, 0, 3, 1.6),
    (6, 0, 6, 1.6),
    (4.5, 2.4, 3, 0),
    (4.5, 2.4, 6, 0),
]
TRI_SUPPORTS = '[[support]]\nat = [0, 0]\nfix = "xy"\n[[support]]\nat = [9, 0]\nfix = "y"\n'


def tri(tmp_path, line, name):
    dxf = write_drawing(tmp_path / "tri.dxf", TRI)
    text = TRI_SUPPORTS + '[[line_load]]\nfrom = [0, 0]\nto = [4.5, 2.4]\nw = "2 kN/m"\n' + line
    return check(dxf, Settings(loads=loads_file(tmp_path, text, name)))


def test_along_and_horizontal_on_a_sloped_rafter(tmp_path):
    along = tri(tmp_path, 'measured = "along"\n', "a.toml")
    horizontal = tri(tmp_path, 'measured = "horizontal"\n', "h.toml")
    (la,), (lh,) = along.truss.cases[0].line_loads, horizontal.truss.cases[0].line_loads
    # arithmetic: rafter length sqrt(4.5^2 + 2.4^2) = 5.1 m, horizontal projection 4.5 m
    assert la.length == pytest.approx(5.1) and lh.length == pytest.approx(4.5)
    assert la.total == pytest.approx((0.0, -2 * 5.1), abs=1e-12)
    assert lh.total == pytest.approx((0.0, -2 * 4.5), abs=1e-12)
    assert la.defaults == ("direction",)
    # R1 takes half of each rafter member: (3.4 + 1.7) / 2 along, (3 + 1.5) / 2 horizontally
    r1a = next(s for s in la.shares if np.allclose(along.truss.xy[s[0]], (3, 1.6)))
    r1h = next(s for s in lh.shares if np.allclose(horizontal.truss.xy[s[0]], (3, 1.6)))
    assert r1a[1] == pytest.approx(2.55) and r1h[1] == pytest.approx(2.25)
    for res, total in ((along, 10.2), (horizontal, 9.0)):
        assert sum(ry for _, _, ry in res.cases[0].reactions) == pytest.approx(total, rel=1e-12)
    # the forces scale with cos(theta) = 4.5 / 5.1: both loads are vertical and uniform along x
    fa, fh = np.asarray(along.cases[0].forces), np.asarray(horizontal.cases[0].forces)
    assert np.abs(fa * 4.5 / 5.1 - fh).max() < 1e-9


def test_direction_normal_on_the_rafter(tmp_path):
    r = tri(tmp_path, 'direction = "normal"\n', "n.toml")
    (ll,) = r.truss.cases[0].line_loads
    # normal to the right walking from [0,0] to [4.5,2.4]: (2.4, -4.5) / 5.1; total w x 5.1 along it
    assert ll.unit == pytest.approx((2.4 / 5.1, -4.5 / 5.1))
    assert ll.total == pytest.approx((2 * 2.4, -2 * 4.5), rel=1e-12)
    rx = sum(x for _, x, _ in r.cases[0].reactions)
    ry = sum(y for _, _, y in r.cases[0].reactions)
    assert (rx, ry) == pytest.approx((-4.8, 9.0), rel=1e-12)
    doc = json.loads(to_json(r))
    assert doc["cases"][0]["line_loads"][0]["direction"] == "normal"


def test_given_direction_is_normalised(tmp_path):
    r = tri(tmp_path, "direction = [3, -4]\n", "g.toml")
    (ll,) = r.truss.cases[0].line_loads
    assert ll.direction == "given"
    assert ll.total == pytest.approx((2 * 5.1 * 0.6, -2 * 5.1 * 0.8), rel=1e-12)


def test_from_to_off_the_members_is_refused(tmp_path):
    dxf = write_drawing(tmp_path / "pratt.dxf", pratt_segments(N, A, H))
    bad = SUPPORTS + f'[[line_load]]\nfrom = [0, {H}]\nto = [{2 * A}, 0]\nw = "1 kN/m"\n'
    with pytest.raises(ConfigError, match=r"\[\[line_load\]\] #1 .*does not follow members: no member lies"):
        check(dxf, Settings(loads=loads_file(tmp_path, bad)))
    off = SUPPORTS + f'[[line_load]]\nfrom = [0, {H}]\nto = [{A / 2}, {H}]\nw = "1 kN/m"\n'
    with pytest.raises(ConfigError, match=r"'to' has no joint within"):
        check(dxf, Settings(loads=loads_file(tmp_path, off, "o.toml")))


def test_a_gap_in_the_chord_is_refused(tmp_path):
    segs = [s for s in pratt_segments(N, A, H) if s != (3 * A, H, 4 * A, H)]
    dxf = write_drawing(tmp_path / "gap.dxf", segs)
    text = SUPPORTS + f'[[line_load]]\nfrom = [0, {H}]\nto = [{N * A}, {H}]\nw = "1 kN/m"\n'
    with pytest.raises(ConfigError, match=r"stop at J\d+ \(7\.5, 2\) m, 7\.5 m of 20 m along it"):
        check(dxf, Settings(loads=loads_file(tmp_path, text)))


@pytest.mark.parametrize(
    "entry, message",
    [
        ("from = [0, 0]\nto = [1, 0]\nw = 2.5", "needs a unit"),
        ('from = [0, 0]\nto = [1, 0]\nw = "2.5 kN"', "unknown unit 'kN'"),
        ('from = [0, 0]\nto = [1, 0]\nw = "2.5 kN/m"\nmeasured = "slope"', "'measured' must be"),
        ('from = [0, 0]\nto = [1, 0]\nw = "2.5 kN/m"\ndirection = [0, 0]', "'direction' must be"),
        ('from = [0, 0]\nto = [0, 0]\nw = "2.5 kN/m"', "the same point"),
        ('from = [0, 0]\nto = [1, 0]\nw = "2.5 kN/m"\nspacing = "1 m"', "unknown key 'spacing'"),
    ],
)
def test_line_load_entry_mistakes(entry, message):
    import tomllib

    with pytest.raises(ConfigError, match=message):
        parse_loads(tomllib.loads("[[line_load]]\n" + entry), "l.toml")


def test_area_load_needs_a_spacing_with_a_unit():
    import tomllib

    with pytest.raises(ConfigError, match=r"\[\[area_load\]\] #1 spacing"):
        parse_loads(tomllib.loads('[[area_load]]\nfrom = [0, 0]\nto = [1, 0]\nq = "1 kPa"\nspacing = "600"'))


# drawn rows: arrows every half panel on the top chord of a 4-panel Pratt (3 m panels, 2 m deep)
DN, DA, DH = 4, 3.0, 2.0


def row(label="0.75 kN/m", y_head=DH, layer="LOAD-SNOW", xs=None):
    xs = xs if xs is not None else [i * DA / 2 for i in range(2 * DN + 1)]
    return [(x, y_head + 1.0, x, y_head, label if k == 0 else None, layer) for k, x in enumerate(xs)]


def drawn(tmp_path, loads, name="row.dxf"):
    dxf = write_drawing(
        tmp_path / name, pratt_segments(DN, DA, DH), loads=loads, supports=[(0, 0, "XY"), (DN * DA, 0, "Y")]
    )
    return check(dxf)


@pytest.mark.parametrize("tail_line", [False, True])
def test_drawn_row_of_arrows_is_a_line_load(tmp_path, tail_line):
    loads = row()
    if tail_line:
        loads.append((0.0, DH + 1.0, DN * DA, DH + 1.0, None, "LOAD-SNOW"))
    r = drawn(tmp_path, loads)
    codes = {f.code for f in r.findings}
    assert Code.LOAD_OFF_JOINT not in codes and Code.LOAD_LABEL_UNCLEAR not in codes
    (lc,) = r.truss.cases
    assert lc.name == "SNOW"  # the case is the layer name after LOAD-, as written
    (ll,) = lc.line_loads
    # 0.75 kN/m x 12 m = 9 kN downward (arithmetic)
    assert ll.total == pytest.approx((0.0, -9.0), abs=1e-12)
    assert len(ll.members) == DN
    # same forces as the loads-file line load on the same chord
    text = (
        '[drawn]\nloads = "ignore"\n'
        f'[[line_load]]\nfrom = [0, {DH}]\nto = [{DN * DA}, {DH}]\nw = "0.75 kN/m"\ncase = "SNOW"\n'
    )
    dxf = tmp_path / "row.dxf"
    typed = check(dxf, Settings(loads=loads_file(tmp_path, text)))
    assert np.abs(np.asarray(r.cases[0].forces) - np.asarray(typed.cases[0].forces)).max() < 1e-9
    assert np.isfinite(r.cases[0].forces).all()


def test_drawn_row_on_two_chords_is_unclear(tmp_path):
    # heads on the top chord and on the bottom chord under one label: which chord is not guessed
    loads = row() + row(y_head=0.0, xs=[DA / 2, 3 * DA / 2])
    loads[-2] = (*loads[-2][:4], None, loads[-2][5])
    r = drawn(tmp_path, loads)
    unclear = [f for f in r.findings if f.code is Code.LOAD_LABEL_UNCLEAR]
    assert len(unclear) == 1 and "not on one straight line" in unclear[0].message
    assert "'SNOW' is not solved" in unclear[0].message
    assert not np.isfinite(r.cases[0].forces).any()
    assert r.n_errors >= 1


def test_drawn_row_of_crossing_arrows_is_unclear(tmp_path):
    loads = row()
    x = loads[3][0]
    loads[3] = (x + 0.8, DH + 1.0, x, DH, None, "LOAD-SNOW")  # a slanted one among vertical arrows
    r = drawn(tmp_path, loads)
    (unclear,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_UNCLEAR]
    assert "not parallel" in unclear.message
    assert not np.isfinite(r.cases[0].forces).any()


def test_drawn_row_minus_sign_is_said_and_the_arrows_give_the_direction(tmp_path):
    r = drawn(tmp_path, row(label="-0.75 kN/m"))
    (ll,) = r.truss.cases[0].line_loads
    assert ll.total == pytest.approx((0.0, -9.0), abs=1e-12)
    (note,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_ASSUMPTION]
    assert "minus sign" in note.message


def test_drawn_single_per_length_arrow_is_unclear(tmp_path):
    r = drawn(tmp_path, row(xs=[DA / 2]))
    (unclear,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_UNCLEAR]
    assert "at least two arrows" in unclear.message
    assert Code.LOAD_OFF_JOINT not in {f.code for f in r.findings}


def test_reports_with_line_loads_follow_the_schema(tmp_path):
    jsonschema = pytest.importorskip("jsonschema")
    from pathlib import Path

    schema = json.loads((Path(__file__).resolve().parents[1] / "docs" / "report.schema.json").read_text())
    validator = jsonschema.Draft202012Validator(schema)
    area = (
        f'[[area_load]]\nfrom = [{N * A}, {H}]\nto = [0, {H}]\nq = "0.6 kN/m2"\nspacing = "600 mm"\n'
        'case = "roof"\ndirection = "normal"\n[[combination]]\nname = "ULS"\nfactors = { snow = 1.5, roof = 1.35 }\n'
    )
    for r in (pratt_with_top_load(tmp_path, area), drawn(tmp_path, row())):
        doc = json.loads(to_json(r))
        errors = sorted(validator.iter_errors(doc), key=str)
        assert not errors, errors[0]
        assert any("line_loads" in c for c in doc["cases"])
    # an undocumented key in a line load is rejected: the schema is strict
    doc["cases"][0]["line_loads"][0]["extra"] = 1
    assert list(validator.iter_errors(doc))


def test_drawn_row_whose_end_arrow_is_between_joints_is_unclear(tmp_path):
    # the load would start mid-member: where it starts is not guessed
    r = drawn(tmp_path, row(xs=[DA / 2 + i * DA / 2 for i in range(2 * DN - 1)]))
    (unclear,) = [f for f in r.findings if f.code is Code.LOAD_LABEL_UNCLEAR]
    assert "first arrow head (1.5, 2) m is not on a joint" in unclear.message


def test_file_line_load_and_drawn_row_in_one_case_need_the_drawn_key(tmp_path):
    dxf = write_drawing(
        tmp_path / "row.dxf", pratt_segments(DN, DA, DH), loads=row(), supports=[(0, 0, "XY"), (DN * DA, 0, "Y")]
    )
    text = f'[[line_load]]\nfrom = [0, 0]\nto = [{DN * DA}, 0]\nw = "1 kN/m"\ncase = "SNOW"\n'
    with pytest.raises(ConfigError, match="load case 'SNOW' has 9 drawn on the sheet and 1 in the loads file"):
        check(dxf, Settings(loads=loads_file(tmp_path, text)))
    added = check(dxf, Settings(loads=loads_file(tmp_path, '[drawn]\nloads = "add"\n' + text, "add.toml")))
    (lc,) = added.truss.cases
    # 0.75 kN/m on the top chord and 1 kN/m on the bottom chord, 12 m each (arithmetic)
    assert sum(ld.fy for ld in lc.loads) == pytest.approx(-(0.75 + 1.0) * DN * DA, rel=1e-12)
    assert len(lc.line_loads) == 2
