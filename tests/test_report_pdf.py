"""The marked-up PDF (report/pdf/, report/render.py), checked with pypdf and pdftoppm.

The fixture is a hand-built Result for a small king-post truss of our own (the store
roof over the orchard press house), so these tests do not depend on the analysis
stages. Its forces are the closed-form method-of-joints solution:

          J3 (3000, 2000)
         /|\\
        / | \\            span 2a = 6000 mm, rise h = 2000 mm
       /  |  \\           pin J1 (xy), roller J4 (y)
     J1---J2---J4         J1 (0, 0), J2 (3000, 0), J4 (6000, 0)

case "snow": P = 10 kN down at J3 -> R1y = R4y = 5; rafters N = -P / (2 sin t)
    = -9.0139 (sin t = 2000 / 3605.55); ties N = P a / (2 h) = +7.5; post 0 (joint
    rule: J2 has two collinear members and no load). Closed-form derivation.
case "wind": H = 2 kN to the right at J3 -> R1x = -2, R4y = +H h / (2a) = 0.6667,
    R1y = -0.6667; J1-J3 +1.2019, J3-J4 -1.2019, ties +1.0, post 0. Closed-form
    derivation (moments about J1, then joints J4 and J1).
"""

from __future__ import annotations

import hashlib
import math
import shutil
import subprocess
from itertools import combinations
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from dxftruss.audit.stability import Mode, PartStability, Verdict
from dxftruss.findings import Code, Finding, sort_findings
from dxftruss.model import Fix, Load, LoadCase, Part, Source, Support, Truss
from dxftruss.pipeline import Result, Settings, SourceInfo, Tolerances
from dxftruss.read import LineWork
from dxftruss.report import CAUTION
from dxftruss.report.pdf import write_pdf
from dxftruss.report.pdf.format import fmt_force, register_fonts
from dxftruss.report.pdf.labels import Label, LabelPlacer, place_member_labels
from dxftruss.report.pdf.sheet import choose_sheet
from dxftruss.report.pdf.symbols import COMPRESSION, TENSION
from dxftruss.statics import CaseResult

pypdf = pytest.importorskip("pypdf")

# ---- closed-form king-post values (see the module docstring) ---------------------------
A, H = 3000.0, 2000.0
L_RAFTER = math.hypot(A, H)
SIN_T = H / L_RAFTER
P_SNOW, H_WIND = 10.0, 2.0
N_RAFTER_SNOW = -P_SNOW / (2 * SIN_T)  # -9.0139
N_TIE_SNOW = P_SNOW * A / (2 * H)  # +7.5
R_WIND = H_WIND * H / (2 * A)  # 0.6667
N_RAFTER_WIND = R_WIND / SIN_T  # 1.2019
N_TIE_WIND = H_WIND - N_RAFTER_WIND * A / L_RAFTER  # 1.0

XY = np.array([[0.0, 0.0], [A, 0.0], [A, H], [2 * A, 0.0]])
# members ordered by their joints: M1 J1-J2, M2 J1-J3, M3 J2-J3, M4 J2-J4, M5 J3-J4
ENDS = np.array([[0, 1], [0, 2], [1, 2], [1, 3], [2, 3]])


def write_king_post_dxf(path: Path, *, version: str = "R2013", extra: bool = True) -> dict[int, str]:
    """The drawing: five LINEs plus things a real drawing has (text, circle, arc,
    a dimension, a hatch, a block). Returns member index -> LINE handle."""
    doc = ezdxf.new(version, setup=version != "R12")
    if version != "R12":
        doc.units = 4  # mm
    msp = doc.modelspace()
    handles = {}
    for e, (i, k) in enumerate(ENDS):
        line = msp.add_line(tuple(XY[i]), tuple(XY[k]), dxfattribs={"layer": "TRUSS"})
        handles[e] = line.dxf.handle
    if extra:
        msp.add_text("PRESS HOUSE ROOF T1 \u00d820 20\u00b0", height=120, dxfattribs={"layer": "NOTES"}).set_placement(
            (200, -600)
        )
        msp.add_circle((A, H + 400), 150, dxfattribs={"layer": "NOTES"})
        msp.add_arc((A, 0), 700, 20, 160, dxfattribs={"layer": "NOTES"})
        if version != "R12":
            h = msp.add_hatch(color=8, dxfattribs={"layer": "NOTES"})
            h.paths.add_polyline_path([(4500, -900), (5600, -900), (5600, -500), (4500, -500)])
            msp.add_linear_dim(
                base=(0, -300), p1=(0, 0), p2=(2 * A, 0), dimstyle="EZDXF", override={"dimtxt": 120}
            ).render()
        blk = doc.blocks.new("TAG")
        blk.add_line((0, 0), (200, 200))
        msp.add_blockref("TAG", (6300, 300), dxfattribs={"layer": "NOTES"})
    doc.saveas(path)
    return handles


def _case(
    name: str, forces: list[float], reactions, zero_rule=(), zero_sol=(), factors=(), assumed=False
) -> CaseResult:
    return CaseResult(
        name=name,
        assumed=assumed,
        factors=tuple(factors),
        forces=np.asarray(forces, dtype=float),
        reactions=tuple(reactions),
        displacements=None,
        zero_by_rule=tuple(zero_rule),
        zero_by_solution=tuple(zero_sol),
        solved_parts=(0,),
        residual=1e-15,
        loads_symmetric=None,
    )


def _stability(part: int, j: int, m: int, r: int, modes=()) -> PartStability:
    k = len(modes)
    rank = 2 * j - k
    verdict = Verdict.MECHANISM if k else (Verdict.DETERMINATE if m + r == rank else Verdict.INDETERMINATE)
    return PartStability(
        part, j, m, r, rank, k, m + r - rank, k, m + r - rank, verdict, 0.3, 2.0, 1e12, tuple(modes), "dense-svd"
    )


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _result(
    dxf: Path,
    truss: Truss,
    stability: tuple[PartStability, ...],
    cases: tuple[CaseResult, ...],
    findings: list[Finding],
    *,
    snap: float,
    near: float,
    axis: float | None,
    recovered: bool = False,
) -> Result:
    """A Result of an AC1027 drawing in mm (units from the header), no line work kept."""
    return Result(
        source=SourceInfo(str(dxf), _sha(dxf), "AC1027", "mm", "header", recovered),
        settings=Settings(),
        tolerances=Tolerances(snap, near, "1e-06 x extent diagonal", "0.02 x median member length"),
        truss=truss,
        linework=LineWork(np.zeros((0, 4)), (), (), (), (), (), "AC1027", "mm", ()),
        stability=stability,
        cases=cases,
        findings=sort_findings(findings),
        symmetry_axis=axis,
    )


def make_result(
    dxf: Path,
    handles: dict[int, str],
    *,
    layers: tuple[str, ...] = ("TRUSS",) * 5,
    snow_name: str = "snow",
    with_cases: bool = True,
    solved: bool = True,
    recovered: bool = False,
) -> Result:
    """The king-post Result with cases snow, wind and a combination, and a few findings."""
    supports = (Support(0, Fix.XY, Source.LOADS_FILE), Support(3, Fix.Y, Source.LOADS_FILE))
    snow = LoadCase(snow_name, (Load(2, 0.0, -P_SNOW, Source.LOADS_FILE),))
    wind = LoadCase("wind", (Load(2, H_WIND, 0.0, Source.LOADS_FILE),))
    f_snow = [N_TIE_SNOW, N_RAFTER_SNOW, 0.0, N_TIE_SNOW, N_RAFTER_SNOW]
    f_wind = [N_TIE_WIND, N_RAFTER_WIND, 0.0, N_TIE_WIND, -N_RAFTER_WIND]
    k1, k2 = 1.35, 1.5
    comb = LoadCase(
        "ULS-1",
        (Load(2, k2 * H_WIND, -k1 * P_SNOW, Source.LOADS_FILE),),
        factors=((snow_name, k1), ("wind", k2)),
    )
    cases_lc = (snow, wind, comb) if with_cases else ()
    truss = Truss(
        xy=XY.copy(),
        ends=ENDS.copy(),
        layers=layers,
        handles=tuple((handles[e],) for e in range(5)),
        supports=supports,
        cases=cases_lc,
        parts=(Part(0, np.arange(4), np.arange(5)),),
        length_unit="mm",
        force_unit="kN",
    )
    nan5 = [float("nan")] * 5
    cases = ()
    if with_cases:
        cases = (
            _case(
                snow_name,
                f_snow if solved else nan5,
                [(0, 0.0, P_SNOW / 2), (3, 0.0, P_SNOW / 2)] if solved else [],
                (2,),
                (2,),
            ),
            _case(
                "wind",
                f_wind if solved else nan5,
                [(0, -H_WIND, -R_WIND), (3, 0.0, R_WIND)] if solved else [],
                (2,),
                (2,),
            ),
            _case(
                "ULS-1",
                [k1 * a + k2 * b for a, b in zip(f_snow, f_wind, strict=True)] if solved else nan5,
                [(0, -k2 * H_WIND, k1 * P_SNOW / 2 - k2 * R_WIND), (3, 0.0, k1 * P_SNOW / 2 + k2 * R_WIND)]
                if solved
                else [],
                (2,),
                (2,),
                factors=((snow_name, k1), ("wind", k2)),
            ),
        )
    findings = [
        Finding(
            Code.NEAR_MISS,
            "the end of M3 is 4.2 mm from joint J2 but not joined",
            joints=(1,),
            members=(2,),
            at=(A, 4.2),
            data={"distance": 4.2},
        ),
        Finding(
            Code.ZERO_FORCE_MEMBER,
            f"case '{snow_name}': 1 zero-force member (M3)",
            members=(2,),
            at=(A, H / 2),
            data={"case": snow_name},
        ),
        Finding(Code.IGNORED_ENTITY, "ignored 1 TEXT, 1 CIRCLE, 1 ARC (not members)", data={"TEXT": 1}),
        Finding(Code.DANGLING_MEMBER, "member M9 has a free end at J9", at=(2 * A, H), joints=(), members=()),
    ]
    return _result(
        dxf, truss, (_stability(0, 4, 5, 3),), cases, findings, snap=0.0072, near=72.0, axis=A, recovered=recovered
    )


def make_mechanism_result(dxf: Path) -> Result:
    """A braced-less rectangle of our own (a gate frame): 4 joints, 4 members, a pin and
    a roller: 2j = 8, m + r = 7, one sway mechanism (top joints move sideways)."""
    xy = np.array([[0.0, 0.0], [0.0, 1500.0], [2000.0, 0.0], [2000.0, 1500.0]])
    ends = np.array([[0, 1], [0, 2], [1, 3], [2, 3]])
    doc = ezdxf.new("R2013")
    msp = doc.modelspace()
    hs = [msp.add_line(tuple(xy[i]), tuple(xy[k]), dxfattribs={"layer": "GATE"}).dxf.handle for i, k in ends]
    doc.saveas(dxf)
    truss = Truss(
        xy=xy,
        ends=ends,
        layers=("GATE",) * 4,
        handles=tuple((h,) for h in hs),
        supports=(Support(0, Fix.XY, Source.DEFAULT), Support(2, Fix.Y, Source.DEFAULT)),
        cases=(
            LoadCase(
                "unit-panel", (Load(1, 0.0, -1.0, Source.DEFAULT), Load(3, 0.0, -1.0, Source.DEFAULT)), assumed=True
            ),
        ),
        parts=(Part(0, np.arange(4), np.arange(4)),),
        length_unit="mm",
        force_unit="kN",
    )
    mode = Mode(joints=(1, 2, 3), displacement=np.array([[1.0, 0.0], [1.0, 0.0], [1.0, 0.0]]), rigid=False)
    st = _stability(0, 4, 4, 3, modes=(mode,))
    findings = [
        Finding(
            Code.MECHANISM,
            "part 1 can move without straining any member: joints J2, J3, J4 move",
            joints=(1, 2, 3),
            at=(0.0, 1500.0),
        ),
        Finding(
            Code.LOAD_EXCITES_MECHANISM, "case 'unit-panel' cannot be carried by part 1", data={"case": "unit-panel"}
        ),
        Finding(Code.ASSUMED_SUPPORTS, "part 1 has no supports: assumed a pin at J1 and a roller at J3"),
    ]
    nan = np.full(4, np.nan)
    case = CaseResult("unit-panel", True, (), nan, (), None, (), (), (), float("nan"), None)
    return _result(dxf, truss, (st,), (case,), findings, snap=0.0025, near=35.0, axis=None)


@pytest.fixture
def king_post(tmp_path: Path) -> tuple[Result, Path]:
    dxf = tmp_path / "press_house_roof.dxf"
    handles = write_king_post_dxf(dxf)
    return make_result(dxf, handles), dxf


def _pages_text(pdf: Path) -> list[str]:
    reader = pypdf.PdfReader(str(pdf))
    return [p.extract_text() or "" for p in reader.pages]


def _norm(s: str) -> str:
    return " ".join(s.split())


# =========================================================================================
def test_fmt_force_is_signed_with_three_significant_digits() -> None:
    assert fmt_force(N_TIE_SNOW) == "+7.50"
    assert fmt_force(N_RAFTER_SNOW) == "-9.01"
    assert fmt_force(12345.6) == "+12346"
    assert fmt_force(0.0) == "0"
    assert fmt_force(float("nan")) == "n/s"
    assert fmt_force(-0.000123) == "-1.23e-04"


def test_pdf_pages_text_and_caution(king_post: tuple[Result, Path], tmp_path: Path) -> None:
    result, _ = king_post
    out = tmp_path / "out.pdf"
    write_pdf(result, out, page="A3")
    pages = _pages_text(out)
    # 3 drawing pages (snow, wind, ULS-1) + 1 findings page + 1 tables page + 1 cut list page
    assert len(pages) == 6
    caution_start = _norm(CAUTION)[:60]
    for k, text in enumerate(pages, 1):
        assert caution_start in _norm(text), f"caution missing on page {k}"
        assert f"page {k} of 6" in text
    # drawing pages, one per case, in order
    assert "Load case 'snow'" in pages[0]
    assert "Load case 'wind'" in pages[1]
    assert "Combination 'ULS-1'" in pages[2]
    # force labels on the drawing pages (closed-form values, see the module docstring)
    assert fmt_force(N_TIE_SNOW) in pages[0] and fmt_force(N_RAFTER_SNOW) in pages[0]
    assert fmt_force(N_RAFTER_WIND) in pages[1] and fmt_force(-N_RAFTER_WIND) in pages[1]
    # reactions drawn with values: R1y = R4y = 5 in snow; R1x = -2 in wind
    assert "Ry +5.00 kN" in pages[0]
    assert "Rx -2.00 kN" in pages[1]
    # the title block: file, sha prefix, units, verdict, an assumption
    assert "press_house_roof.dxf" in pages[0]
    assert result.source.sha256[:16] in pages[0]
    assert "DETERMINATE" in pages[0]
    assert "pin-ended bars" in _norm(pages[0])
    # findings list with codes and messages
    findings_text = _norm(pages[3])
    for f in result.findings:
        assert f.code.value in findings_text
        assert _norm(f.message)[:40] in findings_text
    # member table: forces per case (closed form, 5 significant digits)
    tables = _norm(pages[4])
    assert "-9.0139" in tables and "7.5" in tables and "1.2019" in tables
    assert "0R" in tables  # the post is zero by the joint rules


def test_pdf_is_deterministic(king_post: tuple[Result, Path], tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")
    result, _ = king_post
    a, b = tmp_path / "a.pdf", tmp_path / "b.pdf"
    write_pdf(result, a)
    write_pdf(result, b)
    assert a.read_bytes() == b.read_bytes()
    assert "2026-01-01" in _pages_text(a)[0]


def test_pdf_mechanism_page_and_unsolved_case(tmp_path: Path) -> None:
    result = make_mechanism_result(tmp_path / "gate.dxf")
    out = tmp_path / "gate.pdf"
    write_pdf(result, out, page="A4")
    pages = _pages_text(out)
    # 1 case page (not solved, members uncoloured) + 1 mechanism page + findings + tables + cut list
    assert len(pages) == 5
    assert "Mechanism: part P1, mode 1 of 1" in pages[1]  # the part by its name (naming.py)
    assert "moving joints: J2, J3, J4" in _norm(pages[1])
    assert "not solved" in pages[0]
    assert "mechanism" in pages[2] and "load-excites-mechanism" in pages[2]


def test_pdf_without_cases_shows_members_and_findings(tmp_path: Path) -> None:
    dxf = tmp_path / "press_house_roof.dxf"
    result = make_result(dxf, write_king_post_dxf(dxf), with_cases=False)
    out = tmp_path / "x.pdf"
    write_pdf(result, out, page="letter")
    pages = _pages_text(out)
    assert len(pages) == 4  # model page + findings + tables + cut list
    assert "no load case was solved" in _norm(pages[0])
    assert "M1" in pages[0]  # members numbered when there are no forces


def test_markup_in_names_is_literal(tmp_path: Path) -> None:
    """Layer, case and file names with markup characters: printed literally, nothing parsed."""
    dxf = tmp_path / "roof <b>&amp; co.dxf"
    handles = write_king_post_dxf(dxf)
    layers = ("<b>chord", "web & <img src=x/>", "<b>chord", "<b>chord", "web & <img src=x/>")
    result = make_result(dxf, handles, layers=layers, snow_name="<b>snow & <i>")
    out = tmp_path / "m.pdf"
    write_pdf(result, out)
    text = "\n".join(_pages_text(out))
    assert "roof <b>&amp; co.dxf" in text
    assert "web & <img src=x/>" in text
    assert "<b>chord" in text
    assert "<b>snow & <i>" in text


def test_control_characters_in_names_are_drawn_as_escapes(tmp_path: Path) -> None:
    """A layer name with a terminal escape and a case name with a right-to-left override:
    the PDF shows both as visible escapes (dxftruss.escape.shown), never the raw characters."""
    dxf = tmp_path / "press_house_roof.dxf"
    handles = write_king_post_dxf(dxf)
    layers = ("TIE\x1b[2J",) * 5
    result = make_result(dxf, handles, layers=layers, snow_name="snow\u202eall")
    out = tmp_path / "c.pdf"
    write_pdf(result, out)
    text = "\n".join(_pages_text(out))
    assert "TIE\\x1b[2J" in text  # the members table's layer column
    assert "snow\\u202eall" in text  # page title, tables, the finding that names the case
    assert "\x1b" not in text and "\u202e" not in text
    reader = pypdf.PdfReader(str(out))
    titles = [o.title for o in reader.outline if not isinstance(o, list)]
    assert "Load case 'snow\\u202eall'" in titles  # the bookmark too


def test_damaged_original_falls_back_to_members(tmp_path: Path) -> None:
    dxf = tmp_path / "press_house_roof.dxf"
    handles = write_king_post_dxf(dxf)
    dxf.write_bytes(b"0\nSECTION\n2\nENTITIES\n0\nLINE\n10\nnot-a-number\n")  # unreadable as DXF
    result = make_result(dxf, handles)
    out = tmp_path / "f.pdf"
    write_pdf(result, out)
    pages = _pages_text(out)
    assert "could not be rendered" in _norm(pages[0])
    assert fmt_force(N_TIE_SNOW) in pages[0]  # the members and forces are still there


def test_renderer_failure_falls_back_to_members(
    king_post: tuple[Result, Path], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import dxftruss.report.pdf as pdfmod

    def broken(*a, **k):  # type: ignore[no-untyped-def]
        raise KeyError("block record missing")

    monkeypatch.setattr(pdfmod, "record_drawing", broken)
    result, _ = king_post
    out = tmp_path / "h.pdf"
    write_pdf(result, out)
    pages = _pages_text(out)
    assert len(pages) == 6  # 3 case pages + findings + tables + cut list
    assert "could not be rendered (KeyError" in _norm(pages[0])
    assert fmt_force(N_RAFTER_SNOW) in pages[0]


def test_recovered_drawing_is_rendered_through_the_recovery_reader(tmp_path: Path) -> None:
    dxf = tmp_path / "press_house_roof.dxf"
    handles = write_king_post_dxf(dxf, version="R2000")
    doc = ezdxf.readfile(dxf)
    doc.modelspace().query("LINE")[0].dxf.color = 3
    doc.saveas(dxf)
    dxf.write_bytes(dxf.read_bytes().replace(b"\n 62\n3\n", b"\n62.0\n3\n", 1))  # only recover reads it
    result = make_result(dxf, handles, recovered=True)
    out = tmp_path / "r.pdf"
    write_pdf(result, out)
    pages = _pages_text(out)
    assert len(pages) == 6  # 3 case pages + findings + tables + cut list
    assert "could not be rendered" not in _norm(pages[0])
    assert "REPAIRED ON READING" in _norm(pages[0])


def test_drawing_changed_after_the_check_is_not_rendered(tmp_path: Path) -> None:
    dxf = tmp_path / "press_house_roof.dxf"
    result = make_result(dxf, write_king_post_dxf(dxf))
    dxf.write_bytes(dxf.read_bytes() + b"\n")
    out = tmp_path / "g.pdf"
    write_pdf(result, out)
    assert "changed or vanished after it was checked" in _norm(_pages_text(out)[0])


def test_label_placement_never_overlaps() -> None:
    """A dense lattice (a 30 x 12 grid of joints 30 pt apart, joined to their neighbours
    and by one diagonal per bay) forces many labels to be refused; the ones placed must not intersect
    each other, and every placed label stays inside the area."""
    shapely = pytest.importorskip("shapely.geometry")
    fonts = register_fonts()
    nx, ny, step = 30, 12, 30.0
    pts = np.array([[i * step + 20, j * step + 20] for i in range(nx) for j in range(ny)])

    def idx(i, j):
        return i * ny + j

    ends = []
    for i in range(nx):
        for j in range(ny):
            if i + 1 < nx:
                ends.append((idx(i, j), idx(i + 1, j)))
            if j + 1 < ny:
                ends.append((idx(i, j), idx(i, j + 1)))
            if i + 1 < nx and j + 1 < ny:
                ends.append((idx(i, j), idx(i + 1, j + 1)) if (i + j) % 2 else (idx(i + 1, j), idx(i, j + 1)))
    ends = np.array(ends)
    a, b = pts[ends[:, 0]].astype(float), pts[ends[:, 1]].astype(float)
    area = (0.0, 0.0, nx * step + 40, ny * step + 40)
    placer = LabelPlacer(area, np.column_stack([a, b]))
    rng = np.random.default_rng(7)
    texts = [fmt_force(v) for v in rng.normal(0, 50, len(ends))]
    ids = [f"M{e + 1}" for e in range(len(ends))]
    left = place_member_labels(placer, a, b, texts, font=fonts.regular, size=6.5, fallback=ids)
    placed = placer.placed
    assert len(placed) > 100 and len(left) > 0  # dense: some fit, some do not
    assert len(placed) + len(left) == len(ends)
    polys = [shapely.Polygon(lab.corners) for lab in placed]
    for p, q in combinations(range(len(polys)), 2):
        assert not polys[p].intersects(polys[q]), (placed[p], placed[q])
    box = shapely.box(area[0], area[1], area[0] + area[2], area[1] + area[3])
    assert all(box.contains(p) for p in polys)
    # a label never crosses a member other than its own
    lines = [shapely.LineString([tuple(a[e]), tuple(b[e])]) for e in range(len(ends))]
    from shapely.strtree import STRtree

    tree = STRtree(lines)
    for lab, poly in zip(placed, polys, strict=True):
        hits = set(tree.query(poly, predicate="intersects").tolist())
        assert hits <= {lab.owner}, (lab, hits)


def test_sheet_orientation_follows_the_drawing() -> None:
    wide = choose_sheet((841.89, 1190.55), 12000.0, 2000.0)
    tall = choose_sheet((841.89, 1190.55), 2000.0, 12000.0)
    assert wide.size[0] > wide.size[1]
    assert tall.size[1] > tall.size[0]


# ---- pixels: pdftoppm --------------------------------------------------------------------
def _render_png(pdf: Path, page: int, dpi: int, out: Path) -> np.ndarray:
    from PIL import Image

    subprocess.run(
        ["pdftoppm", "-r", str(dpi), "-f", str(page), "-l", str(page), "-png", "-singlefile", str(pdf), str(out)],
        check=True,
        capture_output=True,
        timeout=60,
    )
    return np.asarray(Image.open(str(out) + ".png").convert("RGB")).astype(float) / 255


def _near(
    img: np.ndarray,
    x_pt: float,
    y_pt: float,
    page_h: float,
    dpi: int,
    rgb: tuple[float, float, float],
    *,
    radius: int = 4,
    tol: float = 0.12,
) -> bool:
    s = dpi / 72.0
    px, py = round(x_pt * s), round((page_h - y_pt) * s)
    win = img[max(py - radius, 0) : py + radius + 1, max(px - radius, 0) : px + radius + 1]
    d = np.abs(win - np.asarray(rgb)).max(axis=2)
    return bool((d < tol).any())


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="pdftoppm (poppler-utils) not installed")
def test_rendered_page_colours_members(king_post: tuple[Result, Path], tmp_path: Path) -> None:
    from dxftruss.report.pdf import page_layout

    result, _ = king_post
    out = tmp_path / "p.pdf"
    write_pdf(result, out, page="A3")
    dpi = 150  # compression lines are hollow: a fine raster keeps their orange edges
    img = _render_png(out, 1, dpi, tmp_path / "p1")
    assert img.std() > 0.05  # not blank
    sheet, pm = page_layout(result, page="A3")  # where the writer put the drawing
    page_h = sheet.size[1]
    # snow case: the tie J1-J2 (M1) in tension at its quarter point, rafter J1-J3 (M2) in compression
    tie = pm.apply(XY[0] + 0.2 * (XY[1] - XY[0]))
    rafter = pm.apply(XY[0] + 0.2 * (XY[2] - XY[0]))
    assert _near(img, tie[0], tie[1], page_h, dpi, TENSION)
    assert _near(img, rafter[0], rafter[1], page_h, dpi, COMPRESSION)
    assert not _near(img, tie[0], tie[1], page_h, dpi, COMPRESSION)
    assert not _near(img, rafter[0], rafter[1], page_h, dpi, TENSION)
    # wind case (page 2): the windward rafter J1-J3 is in tension, the leeward J3-J4 in compression
    img2 = _render_png(out, 2, dpi, tmp_path / "p2")
    lee = pm.apply(XY[3] + 0.2 * (XY[2] - XY[3]))
    assert _near(img2, rafter[0], rafter[1], page_h, dpi, TENSION)
    assert _near(img2, lee[0], lee[1], page_h, dpi, COMPRESSION)


def test_round_off_reactions_are_shown_as_zero(king_post: tuple[Result, Path]) -> None:
    from dataclasses import replace

    from dxftruss.report.pdf.format import clean_reactions

    result, _ = king_post
    snow = result.cases[0]
    noisy = replace(snow, reactions=((0, -9.81e-13, P_SNOW / 2), (3, 0.0, P_SNOW / 2)))
    assert clean_reactions(result, noisy) == [(0, 0.0, 5.0), (3, 0.0, 5.0)]
    real = replace(snow, reactions=((0, -1e-6, P_SNOW / 2),))  # 1e-7 of the load: kept
    assert clean_reactions(result, real)[0][1] == -1e-6


# ---- large trusses: bounded work, bounded pages, thinning said on the page ------------


def _long_pratt(tmp_path: Path, panels: int) -> tuple[Path, Path]:
    """One long Pratt truss of our own (panel 3 m, depth 5 m; chords as polylines, webs as
    lines), pin at the left bottom joint, roller at the right, 12 kN at each interior
    bottom panel point: 4 * panels + 1 members, statically determinate."""
    doc = ezdxf.new("R2018", setup=False, units=6)
    msp = doc.modelspace()
    bottom = [(3.0 * i, 0.0) for i in range(panels + 1)]
    top = [(3.0 * i, 5.0) for i in range(panels + 1)]
    msp.add_lwpolyline(bottom, format="xy", dxfattribs={"layer": "CHORD-BOTTOM"})
    msp.add_lwpolyline(top, format="xy", dxfattribs={"layer": "CHORD-TOP"})
    half = panels // 2
    for i in range(panels + 1):
        msp.add_line(bottom[i], top[i], dxfattribs={"layer": "WEB"})
    for i in range(panels):  # diagonals falling towards mid-span
        a, b = (top[i], bottom[i + 1]) if i < half else (bottom[i], top[i + 1])
        msp.add_line(a, b, dxfattribs={"layer": "WEB"})
    dxf = tmp_path / "long.dxf"
    doc.saveas(dxf)
    lines = ['[units]\nforce = "kN"\nlength = "m"\n']
    lines.append('[[support]]\nat = [0.0, 0.0]\nfix = "xy"\n')
    lines.append(f'[[support]]\nat = [{3.0 * panels!r}, 0.0]\nfix = "y"\n')
    for i in range(1, panels):
        lines.append(f'[[load]]\nat = [{3.0 * i!r}, 0.0]\nfy = -12.0\ncase = "deck"\n')
    toml = tmp_path / "long.toml"
    toml.write_text("\n".join(lines), encoding="utf-8")
    return dxf, toml


def test_large_truss_pdf_is_a_bounded_summary(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from dxftruss.pipeline import check
    from dxftruss.report.pdf import overlay

    dxf, toml = _long_pratt(tmp_path, 1250)  # 5001 members
    r = check(dxf, Settings(loads=toml))
    assert r.truss.n_members == 5001 and len(r.cases) == 1
    drawn: list[tuple[int, str]] = []
    real = overlay._draw_label

    def record(pg, lab, *a, **k):  # type: ignore[no-untyped-def]
        drawn.append((lab.owner, lab.kind))
        return real(pg, lab, *a, **k)

    monkeypatch.setattr(overlay, "_draw_label", record)
    out = tmp_path / "long.pdf"
    write_pdf(r, out)
    pages = _pages_text(out)
    # one drawing page, a mechanism-free model, the findings and a summary: a handful of
    # pages, not the ~100 pages of a 5001-row member table
    assert len(pages) <= 8
    text = _norm(" ".join(pages))
    assert "force values left out at this scale" in text
    assert "the JSON report has every force" in text
    assert "Members: summary" in text and "the JSON report has every member" in text
    assert "load values left out" in text
    forces = np.asarray(r.cases[0].forces, dtype=float)
    labelled = {e for e, kind in drawn if kind == "force"}
    governing = {int(np.nanargmax(forces)), int(np.nanargmin(forces))}
    assert governing <= labelled
    named = {e for f in r.findings for e in f.members}
    assert named, "the long truss has findings naming members (zero-force members)"
    assert named <= labelled
    # thinned: far fewer labels than members
    assert len(labelled) < r.truss.n_members // 10


def test_label_placer_work_per_label_is_bounded() -> None:
    """Labels forced onto one spot over a dense bundle of lines (a long truss at a small
    scale): with the cell cap every fits() makes a bounded number of overlap tests; the
    same placer without a cap tests each new label against all earlier ones."""
    rng = np.random.default_rng(7)
    x = rng.uniform(100, 140, 3000)
    segs = np.column_stack([x, np.full(3000, 100.0), x + 3.0, np.full(3000, 108.0)])

    def run(cap: int) -> tuple[int, int]:
        placer = LabelPlacer((0.0, 0.0, 400.0, 300.0), segs, cell=12.0, cap=cap)
        calls = 0
        for k in range(600):
            cx = 120.0 + (k % 7)
            cands = [Label(f"L{k}", cx + dx, 104.0, 0.0, 20.0, 6.0) for dx in (-2.0, 0.0, 2.0)]
            calls += len(cands)
            placer.place(cands, force=True)
        return placer.tests, calls

    tests, calls = run(24)
    # a 20 x 6 pt box grown by 0.6 touches at most 3 x 2 cells of 12 pt (4 x 3 with its
    # ring for the lines): at most 6 x 24 area tests and 20 x 24 line tests per fits()
    assert tests <= calls * (6 + 20) * 24
    uncapped, _ = run(10**9)
    assert uncapped > 20 * tests  # the bound is what keeps this linear


def test_label_placer_lists_only_what_lies_near_its_area() -> None:
    """A page zoomed to one part: the other parts' lines run hundreds of pages off it.
    The placer lists only the stretch of each line near its area (so the grid stays the
    size of the page), and every fits() answer is the brute-force one: a box fits when
    it lies inside the area and crosses no line and no earlier box."""
    from dxftruss.report.pdf.labels import convex_overlap

    rng = np.random.default_rng(11)
    area = (0.0, 0.0, 600.0, 400.0)
    near = rng.uniform((0, 0), (600, 400), (60, 2))
    short = np.column_stack([near, near + rng.uniform(-40, 40, (60, 2))])
    far_a = rng.uniform(-1e5, 1e5, (200, 2))
    far = np.column_stack([far_a, -far_a + rng.uniform(-300, 300, (200, 2))])  # long, many cross the page
    away = np.column_stack([rng.uniform(5e4, 6e4, (200, 2)), rng.uniform(5e4, 6e4, (200, 2))])
    segs = np.concatenate([short, far, away])
    placer = LabelPlacer(area, segs, cell=24.0, cap=10**9)
    listed = sum(len(v) for v in placer._sgrid.values())
    assert listed < 20_000  # the whole lines at half-cell steps would be ~3 million entries
    crossing = [i for i in range(len(segs)) if any(i in v for v in placer._sgrid.values())]
    assert set(range(60)) <= set(crossing) and not set(range(260, 460)) & set(crossing)
    quads: list = []
    for k in range(400):
        lab = Label(f"L{k}", rng.uniform(-20, 620), rng.uniform(-20, 420), rng.uniform(0, 180), 30.0, 8.0)
        q = lab.quad(placer.pad)
        inside = all(0 <= x <= 600 and 0 <= y <= 400 for x, y in q)
        clear = not any(convex_overlap(q, ((s[0], s[1]), (s[2], s[3]))) for s in segs)
        free = not any(convex_overlap(q, other) for other in quads)
        want = inside and clear and free
        assert placer.fits(lab) == want
        if want:
            placer.add(lab)
            quads.append(q)
    assert 5 <= len(quads) < 300  # the case places labels as well as refusing them
