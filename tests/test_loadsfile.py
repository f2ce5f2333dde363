"""Loads file: every mistake is one ConfigError naming the file and the entry."""

import pytest

from dxftruss.errors import ConfigError
from dxftruss.loadsfile import check_combinations, parse_loads, read_loads_file

GOOD = """
[units]
force = "kN"
length = "mm"

[[support]]
at = [0.0, 0.0]
fix = "xy"

[[load]]
at = [3000.0, 0.0]
fy = "-10 kN"
case = "deck"

[[load]]
at = [6000, 0]
fx = 2
fy = "-2500 N"

[[combination]]
name = "ULS-1"
factors = { deck = 1.5, main = 1.35 }

[[section]]
layer = "CHORD*"
area = "4800 mm2"
E = "210 GPa"
"""


def write(tmp_path, text):
    p = tmp_path / "loads.toml"
    p.write_text(text)
    return p


def test_good_file(tmp_path):
    spec = read_loads_file(write(tmp_path, GOOD))
    assert spec.force_unit == "kN" and spec.length_unit == "mm" and spec.force_unit_given
    assert spec.loads[0].fy == -10.0 and spec.loads[0].case == "deck"
    assert spec.loads[1].fx == 2.0 and spec.loads[1].fy == pytest.approx(-2.5) and spec.loads[1].case == "main"
    assert spec.sections[0].area == pytest.approx(4.8e-3) and spec.sections[0].modulus == pytest.approx(2.1e11)
    check_combinations(spec, {"deck", "main"})


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("[[load]]\nat=[0,0]\nfw=1\n", "[[load]] #1: unknown key 'fw'"),
        ("[[load]]\nfy=1\n", "[[load]] #1: 'at' is missing"),
        ("[[load]]\nat=[0]\n", "[[load]] #1: 'at' must be a pair"),
        ("[[load]]\nat=[0,nan]\n", "[[load]] #1: 'at' must be finite"),
        ("[[load]]\nat=[0,0]\nfy='12,5 kN'\n", "[[load]] #1 fy"),
        ("[[load]]\nat=[0,0]\nfy=inf\n", "not a finite number"),
        ("[[support]]\nat=[0,0]\nfix='w'\n", "[[support]] #1: 'fix'"),
        ("[units]\nforce='tonnes'\n", "known units"),
        ("[units]\nlength='furlong'\n", "[units] length"),
        ("[[section]]\nlayer='A'\narea=4800\nE='210 GPa'\n", "[[section]] #1: 'area' needs a unit"),
        ("[[section]]\nlayer='A'\narea='4800 mm2'\nE='210 GPx'\n", "known units"),
        ("[[combination]]\nname='c'\nfactors={a='x'}\n", "[[combination]] #1"),
        ("[loadz]\n", "unknown table 'loadz'"),
        ("[[load]\nat=[0,0]\n", "TOML syntax error"),
    ],
)
def test_errors_name_the_entry(tmp_path, text, fragment):
    with pytest.raises(ConfigError) as err:
        read_loads_file(write(tmp_path, text))
    msg = str(err.value)
    assert "loads.toml" in msg and fragment in msg and "\n" not in msg


def test_combination_of_unknown_case(tmp_path):
    spec = read_loads_file(write(tmp_path, "[[combination]]\nname='c'\nfactors={snow=1.5}\n"))
    with pytest.raises(ConfigError, match="unknown load case 'snow'"):
        check_combinations(spec, {"dead"})


def test_missing_file(tmp_path):
    with pytest.raises(ConfigError, match="cannot read"):
        read_loads_file(tmp_path / "nope.toml")


def test_drawn_table_says_how_drawn_and_file_entries_combine():
    # [drawn] decides what to do where the drawing and the file overlap; absent: refuse (None)
    spec = parse_loads({"drawn": {"loads": "ignore", "supports": "add"}})
    assert (spec.drawn_loads, spec.drawn_supports) == ("ignore", "add")
    assert (parse_loads({}).drawn_loads, parse_loads({}).drawn_supports) == (None, None)
    with pytest.raises(ConfigError, match=r'\[drawn\] supports must be "add" or "ignore"'):
        parse_loads({"drawn": {"supports": True}})
