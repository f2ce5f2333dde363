"""Engineering results: envelope, indicative member checks, self-weight, deflection.

References named beside each check:
- docs/methods.md (METHODS), check case C11: Euler loads of two solid round bars;
- check cases C4 (Felippa IFEM Ch. 2-3, published displacements) and C5 (three-bar,
  closed-form derivation) for deflections;
- a closed-form virtual-work deflection of the C1 Pratt truss derived in
  ``test_pratt_midspan_deflection_by_virtual_work`` (method of sections + unit load);
- hand calculations written out beside the assertions.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from dxftruss import Settings, check
from dxftruss.checks import member_checks
from dxftruss.envelope import envelope
from dxftruss.model import Fix, Load, LoadCase, Section, Support
from dxftruss.sections import member_sections
from dxftruss.statics import solve_case

from .drawings import pratt_segments, write_drawing
from .trusses import one_part_truss, pratt_arrays, svd_stability


def _solve(truss):
    stab = [svd_stability(truss, p) for p in truss.parts]
    return [solve_case(truss, stab, c)[0] for c in truss.cases]


def _strut(section: Section, length: float, load: float):
    """A pin-ended strut of ``length`` m: pin at the foot, an x roller at the head,
    ``load`` N down at the head (compression = load)."""
    truss = one_part_truss(
        [(0, 0), (0, length)],
        [(0, 1)],
        (Support(0, Fix.XY), Support(1, Fix.X)),
        (LoadCase("c", (Load(1, 0.0, -load),)),),
    )
    truss = dataclasses.replace(truss, force_unit="N", sections=(section,))
    (res,) = _solve(truss)
    env = envelope([res])
    return env, member_checks(truss, env, member_sections(truss))


def test_euler_load_of_the_methods_round_bars():
    # METHODS C11: d = 20 mm, L = 1000 mm, E = 200 000 MPa: A = 314.159 mm2, I = 7853.98 mm4,
    # L/r = 200.0, P_cr = 15 503.1 N; d = 40 mm: L/r = 100, P_cr = 248.050 kN
    for d, pcr, slender in ((0.020, 15503.1, 200.0), (0.040, 248050.0, 100.0)):
        sec = Section("T", math.pi * d**2 / 4, 200e9, inertia=math.pi * d**4 / 64, strength=250e6, number=1)
        _, ch = _strut(sec, 1.0, 10e3)
        assert ch.euler[0] == pytest.approx(pcr, rel=1e-5)
        assert ch.slenderness[0] == pytest.approx(slender, rel=1e-9)
        assert ch.buckling[0] == pytest.approx(10e3 / pcr, rel=1e-5)
        # METHODS C11: tension 10 kN in the 20 mm bar gives sigma = 31.831 MPa; here compression
        assert ch.stress_c[0] == pytest.approx(-10e3 / (math.pi * d**2 / 4))
    assert ch.stress_c[0] == pytest.approx(-7.9577e6, rel=1e-4)  # 10 kN / 1256.64 mm2 (hand)


def test_euler_load_of_a_timber_strut_by_hand():
    # hand calculation: 75 x 200 mm timber, E = 11 GPa, L = 3 m, 40 kN compression, f = 20 MPa.
    # I_min = 200 x 75^3 / 12 = 7.031 25e6 mm4; P_cr = pi^2 x 11e9 x 7.031 25e-6 / 3^2 = 84 816.9 N
    # r = 75 / sqrt 12 = 21.651 mm, L/r = 138.56; |N| / N_cr = 40 000 / 84 816.9 = 0.471 6;
    # |N| / (A f) = 40 000 / (0.015 x 20e6) = 0.133 3
    from dxftruss.loadsfile import shape_properties

    area, inertia = shape_properties("rectangle", {"b": 0.075, "d": 0.2})
    sec = Section("T", area, 11e9, inertia=inertia, strength=20e6, number=1, shape="rectangle")
    _, ch = _strut(sec, 3.0, 40e3)
    assert ch.euler[0] == pytest.approx(84816.9, rel=1e-6)
    assert ch.slenderness[0] == pytest.approx(138.564, rel=1e-5)
    assert ch.buckling[0] == pytest.approx(0.47160, rel=1e-4)
    assert ch.strength[0] == pytest.approx(0.13333, rel=1e-4)
    assert ch.ratio[0] == ch.buckling[0] and ch.kind[0] == "buckling"


PRATT_SUPPORTS = '[[support]]\nat = [0, 0]\nfix = "xy"\n[[support]]\nat = [24, 0]\nfix = "y"\n'


def _loads(tmp_path, text):
    p = tmp_path / "loads.toml"
    p.write_text(text)
    return str(p)


def _member_at(t, p, q):
    """The member between the joints at points p and q."""
    i, k = (int(np.flatnonzero((np.abs(t.xy - xy) < 1e-9).all(axis=1))[0]) for xy in (p, q))
    return int(np.flatnonzero((t.ends[:, 0] == min(i, k)) & (t.ends[:, 1] == max(i, k)))[0])


def test_envelope_of_two_cases_and_a_combination(tmp_path):
    # METHODS C1 Pratt: 10 kN at L1..L5 gives B3 = +53.333, T3 = -60; case "up" is -0.5 x that
    # load (uplift): B3 = -26.667, T3 = +30 (linearity); the combination 1.2 down = 64.0 in B3
    down = "".join(f"[[load]]\nat = [{4 * i}, 0]\nfy = -10\ncase = 'down'\n" for i in range(1, 6))
    up = "".join(f"[[load]]\nat = [{4 * i}, 0]\nfy = 5\ncase = 'up'\n" for i in range(1, 6))
    combo = '[[combination]]\nname = "ULS"\nfactors = { down = 1.2 }\n'
    dxf = write_drawing(tmp_path / "p.dxf", pratt_segments())
    r = check(dxf, Settings(loads=_loads(tmp_path, PRATT_SUPPORTS + down + up + combo)))
    env = r.engineering.envelope
    t = r.truss
    b3 = _member_at(t, (8, 0), (12, 0))
    names = [s.name for s in env.sources]
    assert env.tension[b3] == pytest.approx(64.0) and names[env.tension_source[b3]] == "ULS"
    assert env.compression[b3] == pytest.approx(-80 / 3) and names[env.compression_source[b3]] == "up"
    # reactions: 25 kN up under "down", 12.5 kN down under "up", 30 kN under ULS
    (j, vals, src), _ = env.reactions
    assert j == 0 and vals[2] == pytest.approx(30.0) and vals[3] == pytest.approx(-12.5)
    assert names[src[2]] == "ULS" and names[src[3]] == "up"


def test_self_weight_case_totals_and_combination(tmp_path):
    # square hollow 100 x 5 mm: A = 100^2 - 90^2 = 1900 mm2; density 7850 kg/m3; the C1 Pratt has
    # 12 chord members of 4 m, 7 verticals of 3 m and 6 diagonals of 5 m: 99 m in all.
    # weight = 1900e-6 x 7850 x 99 x 9.806 65 / 1000 = 14.4803 kN (hand); half of each member's at its ends
    sec = (
        '[[section]]\nlayer = "TRUSS"\nshape = "square-hollow"\nD = "100 mm"\nt = "5 mm"\nE = "210 GPa"\n'
        'density = "7850 kg/m3"\n[[load]]\nat = [12, 0]\nfy = -10\n'
        '[[combination]]\nname = "ULS"\nfactors = { main = 1.5, self-weight = 1.35 }\n'
    )
    dxf = write_drawing(tmp_path / "p.dxf", pratt_segments())
    r = check(dxf, Settings(loads=_loads(tmp_path, PRATT_SUPPORTS + sec)))
    total = 1900e-6 * 7850 * 99 * 9.80665 / 1000
    assert r.truss.self_weight.per_part == pytest.approx((total,))
    sw = next(c for c in r.truss.cases if c.name == "self-weight")
    assert sum(ld.fy for ld in sw.loads) == pytest.approx(-total)
    res = next(c for c in r.cases if c.name == "self-weight")
    assert sum(ry for _, _, ry in res.reactions) == pytest.approx(total)
    uls = next(c for c in r.cases if c.name == "ULS")
    assert sum(ry for _, _, ry in uls.reactions) == pytest.approx(1.5 * 10 + 1.35 * total)
    assert not [f for f in r.findings if f.code.value == "self-weight-incomplete"]


def test_self_weight_incomplete_names_the_members(tmp_path):
    # a density for the chords only (layer CHORD): the webs' weight is left out and named
    import ezdxf

    doc = ezdxf.new("R2013", units=6)
    msp = doc.modelspace()
    for x1, y1, x2, y2 in pratt_segments():
        layer = "CHORD" if y1 == y2 else "WEB"
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": layer})
    doc.saveas(tmp_path / "p.dxf")
    sec = (
        '[[section]]\nlayer = "CHORD"\narea = "1900 mm2"\nI = "2.9e6 mm4"\nE = "210 GPa"\ndensity = "7850 kg/m3"\n'
        "[[load]]\nat = [12, 0]\nfy = -10\n"
    )
    r = check(tmp_path / "p.dxf", Settings(loads=_loads(tmp_path, PRATT_SUPPORTS + sec)))
    (f,) = [f for f in r.findings if f.code.value == "self-weight-incomplete"]
    webs = {e for e in range(r.truss.n_members) if r.truss.layers[e] == "WEB"}
    assert set(f.members) == webs and f.next_step
    # chords have a section, webs not: the chords' section is kept, the webs take its EA and are named
    (a,) = [f for f in r.findings if f.code.value == "assumed-stiffness"]
    assert set(a.members) == webs
    assert r.truss.self_weight.per_part[0] == pytest.approx(1900e-6 * 7850 * 48 * 9.80665 / 1000)
    assert r.engineering.deflections  # determinate part, sections given: a deflection


def test_three_bar_and_felippa_deflections():
    # METHODS C5: three-bar, theta = 45 deg, P = 10: delta = 5.857 864 L / EA (closed form)
    L, EA = 2.0, 1000.0
    xy = [(-L, L), (0, L), (L, L), (0, 0)]
    truss = one_part_truss(
        xy,
        [(0, 3), (1, 3), (2, 3)],
        (Support(0, Fix.XY), Support(1, Fix.XY), Support(2, Fix.XY)),
        (LoadCase("c", (Load(3, 0.0, -10.0),)),),
    )
    truss = dataclasses.replace(truss, force_unit="N", sections=(Section("T", 1.0, EA, number=1),))
    (res,) = _solve(truss)
    from dxftruss.deflection import deflections

    (d,) = deflections(truss, [res])
    assert d.joint == 3 and d.dy == pytest.approx(-5.857864 * L / EA, rel=1e-6)
    # METHODS C4 (Felippa IFEM Ch. 3): u3 = (0.4, -0.2)
    xy = [(0, 0), (10, 0), (10, 10)]
    truss = one_part_truss(
        xy, [(0, 1), (1, 2), (0, 2)], (Support(0, Fix.XY), Support(1, Fix.Y)), (LoadCase("c", (Load(2, 2.0, 1.0),)),)
    )
    secs = (
        Section("B12", 1.0, 100.0, number=1),
        Section("B23", 1.0, 50.0, number=2),
        Section("B13", 1.0, 200 * 2**0.5),
    )
    truss = dataclasses.replace(truss, force_unit="N", layers=("B12", "B23", "B13"), sections=secs)
    (res,) = _solve(truss)
    (d,) = deflections(truss, [res])
    assert (d.joint, d.dx, d.dy) == (2, pytest.approx(0.4), pytest.approx(-0.2))
    assert d.span == 10.0 and d.ratio == pytest.approx(50.0)  # supports at x = 0 and 10


def _pratt_forces(loads: dict[int, float], n: int = 6, a: float = 4.0, h: float = 3.0) -> dict[str, float]:
    """Member forces of the C1 Pratt (diagonals down toward mid-span) under downward
    bottom-joint loads {i: P_i at L_i}, by the method of sections (closed form):

    R_left = sum P_i (n - i) / n; beam shear V_i in panel i and moment M(x) at x;
    left half (i <= n/2): B_i = M(x_{i-1}) / h, T_i = -M(x_i) / h, D_i = V_i / sin(theta);
    right half: B_i = M(x_i) / h, T_i = -M(x_{i-1}) / h, D_i = -V_i / sin(theta);
    verticals by the top joints: V_j = -D_{j+1} sin(theta) (left), V_j = -D_j sin(theta)
    (right), V_{n/2} = 0 (three members at U_{n/2}, two collinear, no load)."""
    span = n * a
    r_left = sum(p * (span - i * a) for i, p in loads.items()) / span

    def moment(x: float) -> float:
        return r_left * x - sum(p * (x - i * a) for i, p in loads.items() if i * a < x)

    def shear(i: int) -> float:  # panel i spans x_{i-1}..x_i
        return r_left - sum(p for k, p in loads.items() if k <= i - 1)

    sin = h / math.hypot(a, h)
    out = {}
    for i in range(1, n + 1):
        left = i <= n // 2
        out[f"B{i}"] = moment((i - 1) * a if left else i * a) / h
        out[f"T{i}"] = -moment(i * a if left else (i - 1) * a) / h
        out[f"D{i}"] = shear(i) / sin if left else -shear(i) / sin
    for j in range(n + 1):
        if j < n // 2:
            out[f"V{j}"] = -out[f"D{j + 1}"] * sin
        elif j > n // 2:
            out[f"V{j}"] = -out[f"D{j}"] * sin
        else:
            out[f"V{j}"] = 0.0
    return out


def test_pratt_midspan_deflection_by_virtual_work():
    """Closed-form virtual work: the mid-span deflection of the C1 Pratt (n = 6, a = 4 m,
    h = 3 m, 10 kN at L1..L5, every member EA = 210 GPa x 1900 mm2) is

        delta = sum_e N_e n_e L_e / EA

    with N the real forces and n those of a unit load at L3, both by the method of
    sections (``_pratt_forces``). The stiffness solution's dy at L3 must be -delta."""
    N = _pratt_forces(dict.fromkeys(range(1, 6), 10.0))
    assert N["B3"] == pytest.approx(160 / 3) and N["T3"] == pytest.approx(-60) and N["V0"] == pytest.approx(-25)
    n = _pratt_forces({3: 1.0})
    xy, named = pratt_arrays()
    lengths = {k: math.dist(xy[a], xy[b]) for k, (a, b) in named.items()}
    EA = 210e9 * 1900e-6 / 1e3  # kN
    delta = sum(N[k] * n[k] * lengths[k] for k in named) / EA  # metres
    truss = one_part_truss(
        xy,
        list(named.values()),
        (Support(0, Fix.XY), Support(6, Fix.Y)),
        (LoadCase("c", tuple(Load(i, 0.0, -10.0) for i in range(1, 6))),),
    )
    truss = dataclasses.replace(truss, sections=(Section("T", 1900e-6, 210e9, number=1),))
    (res,) = _solve(truss)
    assert res.displacements[3, 1] == pytest.approx(-delta, rel=1e-9)


def test_footbridge_sample_shows_the_engineering_results(tmp_path):
    # the demo sample (samples/footbridge_truss.toml): envelope, checks, self-weight,
    # deflection and a moving load, in the JSON, the terminal and the PDF, with the caution
    from pathlib import Path

    from pypdf import PdfReader

    from dxftruss.checks import CHECKS_CAUTION
    from dxftruss.report.json import report_dict
    from dxftruss.report.pdf import write_pdf
    from dxftruss.report.text import summary

    samples = Path(__file__).resolve().parent.parent / "samples"
    r = check(samples / "footbridge_truss.dxf", Settings(loads=str(samples / "footbridge_truss.toml")))
    eng = report_dict(r)["engineering"]
    assert eng["member_checks"]["members"] and eng["self_weight"]["total"] > 0
    assert eng["deflections"] and eng["moving_loads"][0]["influence_lines"]["complete"]
    assert {s["kind"] for s in eng["sources"]} == {"case", "combination", "moving"}
    text = " ".join(summary(r, width=200).split())
    assert "envelope: governing members" in text and CHECKS_CAUTION in text
    out = tmp_path / "fb.pdf"
    write_pdf(r, out)
    pages = [" ".join((p.extract_text() or "").split()) for p in PdfReader(out).pages]
    shown = [p for p in pages if "Envelope" in p or "Deflected shape" in p or "Influence lines" in p]
    assert any("Envelope: governing" in p for p in pages) and any("Deflected shape" in p for p in pages)
    assert any("Influence lines of the governing members" in p for p in pages)
    caution = " ".join(CHECKS_CAUTION.split()[:6])
    assert shown and all(caution in p for p in shown)


def test_checks_flag_members_over_the_ratio_and_slender_ones(tmp_path):
    # C1 Pratt, 10 kN at L1..L5, every member a 20 mm solid round bar given by area and I
    # (METHODS C11: A = 314.159 mm2, I = 7853.98 mm4, r = 5 mm), strength 250 MPa.
    # |N| / (A f) > 1 where |N| > 314.159e-6 x 250e6 = 78.54 kN: none (largest 60 kN), but the
    # Euler loads are tiny: N_cr = pi^2 x 200e9 x 7853.98e-12 / L^2 = 15.503 kN / L^2 (L in m),
    # so every compression member with |N| > 15.503 / L^2 is over. L/r = L / 0.005: all members
    # of 3 m and more exceed 200 (600, 800, 1000).
    sec = (
        '[[section]]\nlayer = "TRUSS"\narea = "314.159 mm2"\nI = "7853.98 mm4"\nE = "200 GPa"\nstrength = "250 MPa"\n'
        + "".join(f"[[load]]\nat = [{4 * i}, 0]\nfy = -10\n" for i in range(1, 6))
    )
    dxf = write_drawing(tmp_path / "p.dxf", pratt_segments())
    r = check(dxf, Settings(loads=_loads(tmp_path, PRATT_SUPPORTS + sec)))
    t = r.truss
    forces = r.cases[0].forces
    lengths = t.lengths()
    pcr = math.pi**2 * 200e9 * 7853.98e-12 / lengths**2 / 1e3  # kN
    over = {e for e in range(t.n_members) if forces[e] < 0 and -forces[e] / pcr[e] > 1.0}
    got = {f.members[0] for f in r.findings if f.code.value == "member-over-ratio"}
    assert got == over and over
    slender = {e for e in range(t.n_members) if forces[e] < 0 and lengths[e] / 0.005 > 200}
    got = {f.members[0] for f in r.findings if f.code.value == "slender-member"}
    assert got == slender
    assert all(f.next_step for f in r.findings if f.code.value in ("member-over-ratio", "slender-member"))


def test_loads_file_mistakes_in_the_engineering_tables(tmp_path):
    from dxftruss.errors import ConfigError

    dxf = write_drawing(tmp_path / "p.dxf", pratt_segments())
    bad = [
        # the self-weight case named like a load case
        (
            '[[section]]\nlayer = "TRUSS"\narea = "1 mm2"\nE = "1 GPa"\ndensity = "1 t/m3"\n'
            '[self_weight]\ncase = "main"\n[[load]]\nat = [4, 0]\nfy = -1\n'
        ),
        # a moving load whose segment cuts across the truss
        '[[moving_load]]\nfrom = [0, 0]\nto = [24, 3]\nloads = ["1 kN"]\n',
        # a member list naming a member the drawing does not have
        '[[section]]\nmembers = ["M99"]\narea = "1 mm2"\nE = "1 GPa"\n',
    ]
    for text in bad:
        with pytest.raises(ConfigError):
            check(dxf, Settings(loads=_loads(tmp_path, PRATT_SUPPORTS + text)))


def test_moving_load_on_a_mechanism_is_said(tmp_path):
    # the C1 Pratt without its first diagonal: the end panel can sway (a mechanism), so the
    # moving load gets no influence lines and a moving-load-unsolved warning
    segs = pratt_segments()
    del segs[2]  # panel 1's diagonal
    dxf = write_drawing(tmp_path / "p.dxf", segs)
    text = '[[load]]\nat = [12, 0]\nfy = -1\n[[moving_load]]\nfrom = [0, 0]\nto = [24, 0]\nloads = ["1 kN"]\n'
    r = check(dxf, Settings(loads=_loads(tmp_path, PRATT_SUPPORTS + text)))
    assert r.stability[0].mechanisms == 1
    assert not r.engineering.moving
    (f,) = [f for f in r.findings if f.code.value == "moving-load-unsolved"]
    assert f.data["part"] == 0 and f.next_step
