"""Fuzzing: structurally damaged drawings and wrong loads files through the command line.

Glossary:
    seed      a small valid drawing of our own scenario (tests/fuzz/mutators.py): four
              joints, five members, one nested block reference, one MINSERT, drawn
              supports and loads; R12, R2013, an ENTITIES-only R12 and a binary R2013.
    mutation  a structural edit of the group-code/value pairs (drop, duplicate, swap,
              move, corrupt code, garbage value, nan/inf/1e308/-1e400, huge counts,
              block cycles, empty layer names, long strings, markup, terminal control characters,
              non-UTF-8 bytes)
              or a byte edit (truncation, stray bytes, line endings).
    guarantee what every run must do whatever the input (the hostile-input issue,
              docs/user-guide.md, Exit codes): exit 0, 1 or 2; no exception, hang or "internal error"; the input
              unchanged; on exit 2 one stderr line and no report; otherwise strict JSON
              with schema ``dxftruss-report/1``. Checked by ``mutators.run_main``.
    target    an output path that is a FIFO, socket, directory or symbolic link: refused
              (exit 2) and left as it was, or, for a link to a file, the file replaced.

Hypothesis is derandomised and bounded (229 examples in all); each example runs
under an alarm that turns a hang into a failure. Long runs: tests/fuzz/fuzz_long.py.
"""

from __future__ import annotations

import math
import random
import tempfile
from collections.abc import Callable
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from .fuzz import mutators as mu

pytestmark = pytest.mark.filterwarnings("ignore::RuntimeWarning")

#: per-example alarm, seconds (a hang becomes a failure, not a stuck test run)
ALARM = 30

FUZZ = settings(
    derandomize=True,
    deadline=None,
    database=None,
    print_blob=False,
    suppress_health_check=list(HealthCheck),
)

ASCII_SEEDS = [n for n in mu.SEED_NAMES if not n.endswith("binary")]


def _explain(out: mu.Outcome, ops: object = None) -> str:
    return f"ops={ops} code={out.code} problems={out.problems}\nstderr={out.stderr[:500]}\n{out.trace[-3000:]}"


def _check(data: bytes, ops: object = None, **kw) -> mu.Outcome:  # type: ignore[no-untyped-def]
    with tempfile.TemporaryDirectory(prefix="dxftruss-fuzz-") as d:
        out = mu.run_bytes(data, Path(d), timeout=ALARM, **kw)
    assert out.ok, _explain(out, ops)
    if out.report is not None:  # joints and member lengths are finite numbers (NaN would be null)
        for j in out.report["joints"]:
            assert isinstance(j["x"], float) and isinstance(j["y"], float), j
        for m in out.report["members"]:
            assert isinstance(m["length"], float) and m["length"] >= 0, m
    return out


def _check_repeated(
    name: str, rng: random.Random, mutator: Callable[[mu.Pairs, random.Random], mu.Pairs], most: int
) -> None:
    """Apply ``mutator`` 1..most times to seed ``name``, then check the run."""
    pairs = mu.parse_pairs(mu.seed(name))
    for _ in range(rng.randint(1, most)):
        pairs = mutator(pairs, rng)
    _check(mu.serialize(pairs), name)


def _codes(report: dict) -> set[str]:
    return {f["code"] for f in report["findings"]}


# ---------------------------------------------------------------------------------------
# the seeds themselves: a fuzz run that starts from a broken seed proves nothing


@pytest.mark.parametrize("name", mu.SEED_NAMES)
def test_seed_drawings_are_clean(name):
    # 4 joints, 5 members, pin + roller: determinate (Maxwell's rule, closed-form count
    # m + r = 5 + 3 = 8 = 2j); drawn loads give the cases "snow" (and "wind" from R2013)
    out = _check(mu.seed(name))
    assert out.code == 0, _explain(out)
    rep = out.report
    assert len(rep["joints"]) == 4 and len(rep["members"]) == 5
    assert [p["verdict"] for p in rep["parts"]] == ["determinate"]
    assert not rep["source"]["recovered"]
    # the web comes from BAY -> WEB (nested INSERT), on the INSERT's layer (layer-0 rule)
    assert sorted(m["layer"] for m in rep["members"]) == ["CHORD", "CHORD", "RAFTER", "RAFTER", "WEB"]
    assert "snow" in {c["name"] for c in rep["cases"]}


def test_valid_loads_file_is_accepted():
    with tempfile.TemporaryDirectory() as d:
        loads = Path(d) / "site.toml"
        loads.write_text(mu.toml_text(mu.VALID_LOADS))
        drawing = Path(d) / "frame.dxf"
        drawing.write_bytes(mu.seed("r2013"))
        out = mu.run_main(drawing, loads=loads, timeout=ALARM)
    assert out.ok and out.code == 0, _explain(out)
    assert {"dead", "snow", "ULS-1"} <= {c["name"] for c in out.report["cases"]}


# ---------------------------------------------------------------------------------------
# random structural mutations of every seed


@settings(FUZZ, max_examples=55)
@given(name=st.sampled_from(mu.SEED_NAMES), rng=st.randoms(use_true_random=False))
def test_mutated_drawings_keep_the_guarantees(name, rng):
    data, ops = mu.mutate(mu.seed(name), rng, max_ops=3, ascii_dxf=not name.endswith("binary"))
    _check(data, (name, ops))


@settings(FUZZ, max_examples=12)
@given(name=st.sampled_from(ASCII_SEEDS), rng=st.randoms(use_true_random=False))
def test_mutated_drawings_with_terminal_output(name, rng):
    # not --quiet: the summary goes to a strict UTF-8 stdout, as on a terminal
    data, ops = mu.mutate(mu.seed(name), rng, max_ops=2)
    _check(data, (name, ops), quiet=False)


# ---------------------------------------------------------------------------------------
# targeted: non-finite and absurd numbers in coordinates


def _line_coordinate_slots(pairs: mu.Pairs) -> list[int]:
    """Indices of the x/y values (codes 10, 20, 11, 21) of model-space LINE entities."""
    lo, hi = mu._entity_zone(pairs)
    ent_start = next(i for i in range(lo, hi) if pairs[i] == (b"  2", b"ENTITIES"))
    out = []
    for a, b in mu._entity_spans(pairs, b"LINE"):
        if a < ent_start:
            continue
        layer = next(v for c, v in pairs[a:b] if c.strip() == b"8")
        if layer.startswith(b"LOAD"):
            continue
        out += [k for k in range(a, b) if pairs[k][0].strip() in (b"10", b"20", b"11", b"21")]
    return out


@settings(FUZZ, max_examples=20)
@given(
    name=st.sampled_from(ASCII_SEEDS),
    slot=st.integers(min_value=0, max_value=1000),
    value=st.sampled_from(mu.SPECIAL_NUMBERS),
)
def test_special_numbers_in_line_coordinates(name, slot, value):
    pairs = mu.parse_pairs(mu.seed(name))
    slots = _line_coordinate_slots(pairs)
    k = slots[slot % len(slots)]
    pairs[k] = (pairs[k][0], value)
    out = _check(mu.serialize(pairs), (name, k, value))
    v = float(value)
    if out.code != 2 and (not math.isfinite(v) or abs(v) > 1e12):
        # docs/user-guide.md, Damaged and unusual files: a non-finite coordinate is an
        # invalid-coordinate error for that entity;
        # the reader also refuses magnitudes beyond 1e12 drawing units
        assert "invalid-coordinate" in _codes(out.report), out.report["findings"]
        assert out.code == 1
        assert len(out.report["members"]) < 5


@settings(FUZZ, max_examples=10)
@given(name=st.sampled_from(ASCII_SEEDS), rng=st.randoms(use_true_random=False))
def test_special_numbers_anywhere(name, rng):
    _check_repeated(name, rng, mu.m_special_number, most=4)


# ---------------------------------------------------------------------------------------
# targeted: MINSERT counts and block nesting

COUNTS = [0, -3, 1, 2, 1000, 32767, 65535, 100_000, 2**31 - 1, -(2**31)]


@settings(FUZZ, max_examples=16)
@given(
    name=st.sampled_from(ASCII_SEEDS),
    rows=st.sampled_from(COUNTS),
    cols=st.sampled_from(COUNTS),
    spacing=st.sampled_from([b"0.0", b"1.0", b"1e-300", b"1e308", b"nan"]),
    which=st.integers(min_value=0, max_value=10),
)
def test_absurd_minsert_counts_are_bounded(name, rows, cols, spacing, which):
    pairs = mu.parse_pairs(mu.seed(name))
    spans = mu._entity_spans(pairs, b"INSERT")
    a, b = spans[which % len(spans)]
    values = {b" 70": str(cols).encode(), b" 71": str(rows).encode(), b" 44": spacing, b" 45": spacing}
    ent = [p for p in pairs[a:b] if p[0] not in values] + list(values.items())
    out = _check(mu.serialize(pairs[:a] + ent + pairs[b:]), (name, rows, cols, spacing))
    if out.code == 2:  # a refusal must say why
        assert "limit" in out.stderr or "damaged" in out.stderr or "DXF" in out.stderr, out.stderr
    # bounded work: the alarm did not fire, and a small array is still read
    assert out.seconds < ALARM


@settings(FUZZ, max_examples=16)
@given(name=st.sampled_from(ASCII_SEEDS), rng=st.randoms(use_true_random=False))
def test_block_nesting_cycles_and_missing_blocks(name, rng):
    _check_repeated(name, rng, mu.m_nest_blocks, most=3)


@pytest.mark.parametrize("name", ASCII_SEEDS)
@pytest.mark.parametrize("target", [b"BAY", b"WEB"])
def test_block_cycle_is_a_finding(name, target):
    # WEB -> BAY -> WEB (target BAY) or WEB -> WEB (target WEB): a cycle, reported, no hang
    pairs = mu.parse_pairs(mu.seed(name))
    _, _, end = next(b for b in mu._blocks(pairs) if b[0] == b"WEB")
    pairs = pairs[:end] + mu._insert_entity(target, name.startswith("r12")) + pairs[end:]
    out = _check(mu.serialize(pairs), (name, target))
    assert out.code in (0, 1), _explain(out)
    cycles = [f for f in out.report["findings"] if f.get("data", {}).get("reason") == "block-cycle"]
    assert cycles, out.report["findings"]
    # the web member is still read once (the cycle is cut, not followed or dropped)
    assert [m["layer"] for m in out.report["members"]].count("WEB") == 1


# ---------------------------------------------------------------------------------------
# targeted: truncation, strings, bytes


@settings(FUZZ, max_examples=20)
@given(name=st.sampled_from(mu.SEED_NAMES), rng=st.randoms(use_true_random=False))
def test_truncated_files(name, rng):
    data = mu.b_truncate(mu.seed(name), rng)
    out = _check(data, name)
    if out.report is not None and out.report["source"]["recovered"]:
        assert "recovered-file" in _codes(out.report)


@settings(FUZZ, max_examples=16)
@given(name=st.sampled_from(ASCII_SEEDS), rng=st.randoms(use_true_random=False))
def test_layer_names_and_strings(name, rng):
    pairs = mu.parse_pairs(mu.seed(name))
    for _ in range(rng.randint(1, 3)):
        op = rng.choice([mu.m_empty_layer, mu.m_weird_string, mu.m_weird_string])
        pairs = op(pairs, rng)
    _check(mu.serialize(pairs), name, quiet=rng.random() < 0.5)


@settings(FUZZ, max_examples=16)
@given(
    name=st.sampled_from(ASCII_SEEDS),
    control=st.sampled_from(mu.CONTROL),
    rng=st.randoms(use_true_random=False),
)
def test_terminal_control_in_every_layer_name(name, control, rng):
    # every layer name of the seed (members, supports, loads) gets the same control
    # sequence; the summary is printed (not --quiet) and must show it escaped
    pairs = mu.parse_pairs(mu.seed(name))
    pairs = [(c, v + control) if c.strip() == b"8" and v.strip() else (c, v) for c, v in pairs]
    if rng.random() < 0.5:
        pairs = mu.m_weird_string(pairs, rng)
    _check(mu.serialize(pairs), (name, control), quiet=False)


# ---------------------------------------------------------------------------------------
# loads files: every mistake is exit 2 with one line naming the file


@settings(FUZZ, max_examples=30)
@given(rng=st.randoms(use_true_random=False))
def test_bad_loads_files_exit_2_with_one_line(rng, capsys):
    text, what = mu.bad_loads(rng)
    with tempfile.TemporaryDirectory() as d:
        drawing = Path(d) / "frame.dxf"
        drawing.write_bytes(mu.seed("r2013"))
        loads = Path(d) / "site loads.toml"
        loads.write_bytes(text)
        capsys.readouterr()
        from dxftruss.cli import main

        before = drawing.read_bytes(), loads.read_bytes()
        with mu.alarm(ALARM):
            code = main(["check", str(drawing), "--loads", str(loads), "--json", str(Path(d) / "r.json"), "--quiet"])
        err = capsys.readouterr().err
        assert (drawing.read_bytes(), loads.read_bytes()) == before
        assert not (Path(d) / "r.json").exists()
    detail = f"{what}\n{text.decode('utf-8', 'replace')}\nstderr: {err}"
    assert code == 2, detail
    lines = err.strip().splitlines()
    assert len(lines) == 1, detail
    assert str(loads) in lines[0], detail
    assert "Traceback" not in err and "internal error" not in err, detail


@pytest.mark.parametrize("kind", ["support", "load"])
@pytest.mark.parametrize("at", ["[1e300, -1e300]", "[1.7e308, 0.0]", "[1e6, 1e6]", "[4.0, 3.5]"])
def test_far_points_in_loads_file(kind, at):
    # docs/user-guide.md, The loads file: a point with no joint nearby is an input error naming the file and entry;
    # 1e300 overflows the distance to the nearest joint (inf) - still an input error
    entry = {"at": at, "fix": '"xy"'} if kind == "support" else {"at": at, "fy": "-1.0"}
    with tempfile.TemporaryDirectory() as d:
        loads = Path(d) / "far.toml"
        loads.write_text(mu.toml_text([(kind, entry)]))
        drawing = Path(d) / "frame.dxf"
        drawing.write_bytes(mu.seed("r12"))
        out = mu.run_main(drawing, loads=loads, timeout=ALARM)
    assert out.ok, _explain(out)
    assert out.code == 2 and f"far.toml: [[{kind}]] #1" in out.stderr, out.stderr


@pytest.mark.parametrize(
    "force_unit, fy",
    [("N", '"1e308 MN"'), ("lbf", '"1e308 tf"'), ("N", "1e308"), ("MN", '"1e-320 N"')],
)
def test_loads_beyond_float_range(force_unit, fy):
    # 1e308 MN in N is 1e314: beyond the largest double (1.8e308) -> inf after conversion.
    # Must be refused as a loads-file error, or at least not give a crash or non-finite JSON.
    tables = [("units", {"force": f'"{force_unit}"'}), ("load", {"at": "[4.0, 3.0]", "fy": fy, "case": '"big"'})]
    with tempfile.TemporaryDirectory() as d:
        loads = Path(d) / "big.toml"
        loads.write_text(mu.toml_text(tables))
        drawing = Path(d) / "frame.dxf"
        drawing.write_bytes(mu.seed("r12"))
        out = mu.run_main(drawing, loads=loads, timeout=ALARM)
    assert out.ok, _explain(out)
    if out.code == 2:
        assert "big.toml" in out.stderr
    else:
        big = next(c for c in out.report["cases"] if c["name"] == "big")
        for ld in big["loads"]:
            assert ld["fy"] is not None, big  # a load that became inf is written as null


def test_fuzz_inputs_are_reproducible():
    # the long runner relies on an input being a pure function of its seed number
    a = mu.random_input(random.Random(12345))
    b = mu.random_input(random.Random(12345))
    assert a == b


# ---------------------------------------------------------------------------------------
# hostile option values (LENGTH options accept a unit; a bare number is in drawing units)

HOSTILE_LENGTHS = [
    "0",
    "-1",
    "-0.5mm",
    "1e300",
    "1e-300",
    "nan",
    "inf",
    "-inf",
    "1e400mm",
    "1/0in",
    "0/0in",
    "1/16in",
    "12,5mm",
    "",
    " ",
    "5 furlong",
    "9**9**9 mm",
    "0x10",
    "\u00a01mm",
    "1e308km",
]


@pytest.mark.parametrize("option", ["--snap", "--near-miss"])
@pytest.mark.parametrize("value", HOSTILE_LENGTHS)
def test_hostile_length_options(option, value):
    out = _check(mu.seed("r2013"), (option, value), extra=[f"{option}={value}"])  # "=": values may start with "-"
    v = value.strip()
    wrong = ("nan", "inf", "1e400mm", "1/0in", "0/0in", "12,5mm", "", "5 furlong", "9**9**9 mm", "1e308km")
    if v in wrong or v.startswith("-"):
        # not a finite, non-negative length (1e308 km is 1e314 mm: beyond double range):
        # a wrong option, refused with exit 2 naming the option (docs/user-guide.md, Exit codes)
        assert out.code == 2 and option in out.stderr, out.stderr


# ---------------------------------------------------------------------------------------
# output paths that are not plain new files: refused with exit 2, or written as a regular
# file at the link's target; a special file is never replaced

OUTPUT_TARGETS = [
    "new",
    "regular",
    "fifo",
    "socket",
    "dir",
    "link-to-file",
    "dangling-link",
    "link-to-dir",
    "link-loop",
]


def _make_target(kind: str, d: Path) -> Path:
    return mu.make_output_target(kind, d)


@settings(FUZZ, max_examples=18)
@given(kind=st.sampled_from(OUTPUT_TARGETS), option=st.sampled_from(["--json", "--dxf"]))
def test_special_output_targets(kind, option):
    import os
    import stat

    from dxftruss.cli import main

    with tempfile.TemporaryDirectory(prefix="dxftruss-fuzz-") as d:
        folder = Path(d)
        drawing = folder / "seed.dxf"
        drawing.write_bytes(mu.seed("r2013"))
        target = _make_target(kind, folder)
        before = os.lstat(target) if kind != "new" else None
        code = main(["check", str(drawing), option, str(target), "--quiet"])
        leftovers = [f.name for f in folder.iterdir() if f.name.endswith(".tmp")]
        assert leftovers == [], leftovers
        if kind in ("new", "regular", "link-to-file"):
            assert code == 0
            real = folder / "real.target" if kind == "link-to-file" else target
            assert stat.S_ISREG(os.lstat(real).st_mode) and real.read_bytes() != b"old"
            if kind == "link-to-file":
                assert target.is_symlink()  # the link is kept, its target replaced
        else:
            assert code == 2, (kind, code)
            after = os.lstat(target)
            assert (after.st_ino, stat.S_IFMT(after.st_mode)) == (before.st_ino, stat.S_IFMT(before.st_mode))
