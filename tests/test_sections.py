"""Member sections from the loads file (sections.py, loadsfile [[section]]).

References: the second moment of area of a rectangle (b d^3 / 12) and of an annulus
(pi (D^4 - d^4) / 64) are closed forms (any strength-of-materials text; derived by
integrating y^2 dA); units are checked against pint's own unit definitions.
"""

from __future__ import annotations

import math

import numpy as np
import pint
import pytest

from dxftruss.errors import ConfigError
from dxftruss.loadsfile import parse_loads, shape_properties
from dxftruss.model import Fix, Section, Support
from dxftruss.sections import member_sections

from .trusses import one_part_truss

U = pint.UnitRegistry()


def _spec(text: str):
    import tomllib

    return parse_loads(tomllib.loads(text), "loads.toml")


def test_rectangle_takes_the_weaker_axis():
    # timber 75 x 200 mm: A = 0.015 m2, I_min = 200 x 75^3 / 12 mm4 (closed form)
    area, inertia = shape_properties("rectangle", {"b": 0.075, "d": 0.2})
    assert area == pytest.approx(0.015)
    assert inertia == pytest.approx((200 * U.mm * (75 * U.mm) ** 3 / 12).to("m**4").magnitude)


def test_hollow_sections():
    # round 114.3 x 6.3 mm and square 100 x 5 mm (sharp corners), closed forms
    D, t = 0.1143, 0.0063
    d = D - 2 * t
    area, inertia = shape_properties("round-hollow", {"D": D, "t": t})
    assert area == pytest.approx(math.pi / 4 * (D**2 - d**2))
    assert inertia == pytest.approx(math.pi / 64 * (D**4 - d**4))
    area, inertia = shape_properties("square-hollow", {"D": 0.1, "t": 0.005})
    assert area == pytest.approx(0.1**2 - 0.09**2)  # 1900 mm2
    assert inertia == pytest.approx((0.1**4 - 0.09**4) / 12)


def test_section_keys_with_units():
    spec = _spec(
        '[[section]]\nmembers = ["M1", "M2"]\nname = "post"\nshape = "round-hollow"\nD = "114.3 mm"\nt = "6.3 mm"\n'
        'E = "210 GPa"\nstrength = "355 MPa"\ndensity = "7850 kg/m3"\n'
        '[[section]]\nlayer = "WEB*"\narea = "12 in2"\nr = "30 mm"\nE = "29000 ksi"\n'
        "[checks]\nratio = 0.9\nslenderness = 180\n"
    )
    post, web = spec.sections
    assert post.members == ("M1", "M2") and post.layer is None and post.label == "post"
    assert post.strength == pytest.approx(355e6) and post.density == pytest.approx(7850.0)
    assert web.area == pytest.approx((12 * U.inch**2).to("m**2").magnitude)
    assert web.modulus == pytest.approx((29000 * U.ksi).to("Pa").magnitude)
    assert web.radius == pytest.approx(0.030)
    assert spec.check_ratio == 0.9 and spec.slenderness_limit == 180.0


@pytest.mark.parametrize(
    "text",
    [
        '[[section]]\narea = "1 mm2"\nE = "1 GPa"\n',  # neither layer nor members
        '[[section]]\nlayer = "A"\nmembers = ["M1"]\narea = "1 mm2"\nE = "1 GPa"\n',  # both
        '[[section]]\nlayer = "A"\nshape = "rectangle"\nb = "10 mm"\nE = "1 GPa"\n',  # d missing
        '[[section]]\nlayer = "A"\nshape = "round-hollow"\nD = "10 mm"\nt = "5 mm"\nE = "1 GPa"\n',  # solid
        '[[section]]\nlayer = "A"\narea = "1 mm2"\nI = "1 mm4"\nr = "1 mm"\nE = "1 GPa"\n',  # I and r
        '[[section]]\nlayer = "A"\narea = "1 mm2"\nE = "1 GPa"\ndensity = "7850"\n',  # no unit
        "[checks]\nratio = 0\n",
    ],
)
def test_bad_sections_are_refused(text):
    with pytest.raises(ConfigError):
        _spec(text)


def _truss(sections):
    #   1 ---- 3        chords on CHORD, the web on WEB
    #   |    /
    #   0 --- 2
    xy = [(0, 0), (0, 1), (1, 0), (1, 1)]
    t = one_part_truss(xy, [(0, 1), (0, 2), (1, 3), (2, 3), (1, 2)], (Support(0, Fix.XY), Support(2, Fix.Y)))
    import dataclasses

    layers = ("WEB", "CHORD", "CHORD", "WEB", "WEB")
    return dataclasses.replace(t, layers=layers, sections=tuple(sections))


def test_first_match_wins_and_members_by_id():
    chord = Section("chord", 1e-3, 2e11, number=1)
    post = Section(None, 2e-3, 1e10, ("M1",), number=2)
    ms = member_sections(_truss([post, chord]))
    assert ms.index.tolist() == [0, 1, 1, -1, -1]
    assert ms.ea[0] == pytest.approx(2e7) and np.isnan(ms.ea[3])
    with pytest.raises(ConfigError):
        member_sections(_truss([Section(None, 1e-3, 2e11, ("M9",), number=1)]))
