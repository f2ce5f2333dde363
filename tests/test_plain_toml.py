"""The plain-TOML reader of the loads file gives what tomllib gives, or steps aside.

Reference: Python's own ``tomllib`` (TOML 1.0). Property tests (hypothesis, derandomised)
write documents in the plain subset and documents just outside it (escapes, tabs in
strings, comments after values, dotted keys, repeated keys and tables, leading zeros,
inf / nan, random characters put in): whenever ``plain_toml`` answers, the answer is
tomllib's, value for value and type for type (int stays int, 1.0 stays float); when
tomllib refuses a text, ``plain_toml`` does not answer; a document written in the
subset is always answered.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st

from dxftruss.loadsfile import plain_toml, read_loads_file

BARE = "abcxyzABZ019_-"
keys = st.text(alphabet=BARE, min_size=1, max_size=6)
ints = st.integers(min_value=-(10**20), max_value=10**20).map(str)
floats = st.floats(allow_nan=False, allow_infinity=False).map(repr)
numbers = st.one_of(ints, floats)
plain_strings = st.text(alphabet=st.characters(blacklist_characters='"\\', blacklist_categories=("Cc", "Cs")))
plain_values = st.one_of(
    numbers,
    plain_strings.map(lambda s: f'"{s}"'),
    st.sampled_from(["true", "false"]),
    st.lists(numbers, min_size=1, max_size=4).map(lambda xs: "[" + ", ".join(xs) + "]"),
)
# values just outside the subset (some valid TOML, some not)
near_values = st.sampled_from(
    [
        '"a\\tb"',
        '"a\tb"',
        "'literal'",
        "1_000",
        "01",
        "1.",
        ".5",
        "inf",
        "-nan",
        "0x1F",
        "1979-05-27",
        "[]",
        "[1, 2,]",
        '["a", 1]',
        "{ x = 1 }",
        "1 # note",
        '"unclosed',
        "TRUE",
        "[1,\n2]",
        '"""multi"""',
        "+1e5",
        "-0.0",
        "1E+05",
    ]
)
spaces = st.sampled_from(["", " ", "  ", "\t"])


@st.composite
def documents(draw: st.DrawFn, near: bool) -> tuple[str, bool]:
    """(text, written in the plain subset with unique keys and tables)."""
    lines: list[str] = []
    clean = True
    tables: set[str] = set()
    arrays: set[str] = set()
    used: set[str] = set()
    for _ in range(draw(st.integers(0, 8))):
        kind = draw(st.sampled_from(["key", "key", "key", "table", "aot", "comment", "blank"]))
        if kind == "key":
            k = draw(keys)
            if k in used:
                clean = False
            used.add(k)
            v = draw(near_values) if near and draw(st.booleans()) else draw(plain_values)
            if v in near_values.elements:  # type: ignore[attr-defined]
                clean = False
            lines.append(f"{draw(spaces)}{k}{draw(spaces)}={draw(spaces)}{v}{draw(spaces)}")
        elif kind in ("table", "aot"):
            name = draw(st.sampled_from(["units", "load", "support", "x-y", "k1"]))
            if (kind == "table" and (name in tables or name in arrays)) or (kind == "aot" and name in tables):
                clean = False
            (tables if kind == "table" else arrays).add(name)
            used = set()
            lines.append(f"[{name}]" if kind == "table" else f"[[{name}]]")
        elif kind == "comment":
            lines.append("# " + draw(plain_strings))
        else:
            lines.append(draw(spaces))
    return "\n".join(lines) + draw(st.sampled_from(["", "\n"])), clean


def tomllib_or_error(text: str) -> str:
    try:
        return repr(tomllib.loads(text))  # repr tells 1 from 1.0 and keeps key order
    except tomllib.TOMLDecodeError:
        return "error"


@settings(derandomize=True, max_examples=400, deadline=None)
@given(documents(near=False))
def test_plain_documents_read_as_tomllib_reads_them(doc: tuple[str, bool]) -> None:
    text, clean = doc
    got = plain_toml(text)
    expected = tomllib_or_error(text)
    if got is not None:
        assert repr(got) == expected
    if clean and "\t" not in text:
        assert got is not None and expected != "error"


@settings(derandomize=True, max_examples=400, deadline=None)
@given(
    documents(near=True),
    st.lists(st.tuples(st.integers(0, 400), st.sampled_from(list("\"\\'#=[]., \t\r\n0aé\x00\x7f")))),
)
def test_near_documents_are_tomllibs_or_left_to_it(doc: tuple[str, bool], edits: list[tuple[int, str]]) -> None:
    text, _ = doc
    for at, ch in edits:
        i = at % (len(text) + 1)
        text = text[:i] + ch + text[i:]
    got = plain_toml(text)
    if got is not None:
        assert repr(got) == tomllib_or_error(text)


def test_repeated_key_and_table_are_left_to_tomllib() -> None:
    # TOML 1.0: a key or a table defined twice is an error (tomllib raises)
    assert plain_toml("a = 1\na = 2\n") is None
    assert plain_toml("[units]\n[units]\n") is None
    assert plain_toml("[[load]]\n[load]\n") is None
    assert plain_toml("load = 1\n[[load]]\n") is None


def test_bench_style_loads_file_reads_the_same(tmp_path: Path) -> None:
    text = '# c\n\n[units]\nforce = "kN"\nlength = "m"\n\n'
    text += "".join(f'[[load]]\nat = [{3.0 * i}, 0.0]\nfy = -12.0\ncase = "deck"\n\n' for i in range(1, 50))
    assert plain_toml(text) == tomllib.loads(text)  # reference: tomllib
    path = tmp_path / "l.toml"
    path.write_text(text)
    spec = read_loads_file(path)
    assert len(spec.loads) == 49
