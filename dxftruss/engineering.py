"""The engineering results stage: envelope, indicative member checks, self-weight
totals, deflections and moving loads, from the solved cases (after statics).

Glossary:
    envelope    envelope.py: per member the largest tension and compression over every
                case, combination and moving load, and the extreme reactions.
    checks      checks.py: indicative stress, Euler load, slenderness, utilisations;
                only where sections are given.
    deflection  deflection.py: the largest vertical deflection per part and case.
    moving      moving.py: influence lines and extremes of each ``[[moving_load]]``.

Everything here is indicative, never a code design (``checks.CHECKS_CAUTION``).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from .audit.stability import PartStability
from .checks import MemberChecks, check_findings, member_checks
from .deflection import PartDeflection, deflections
from .envelope import Envelope, envelope
from .errors import ConfigError
from .findings import Code, Finding
from .lineloads import ChainError, find_chain
from .loadsfile import LoadsSpec
from .model import Truss, joint_id
from .moving import MovingResult, PartFactor, Vehicle, factor_part, solve_moving
from .sections import MemberSections, member_sections
from .statics import CaseResult, member_ea
from .units import LENGTH_UNITS


@dataclass(frozen=True)
class Engineering:
    """The engineering results of one check (see the module glossary).

    ``sections`` is None without any ``[[section]]``; ``checks`` None when no member has
    a section; ``moving`` one result per solved ``[[moving_load]]``."""

    envelope: Envelope
    sections: MemberSections | None
    checks: MemberChecks | None
    deflections: tuple[PartDeflection, ...]
    moving: tuple[MovingResult, ...]


def engineering_results(
    truss: Truss,
    stability: Sequence[PartStability],
    cases: Sequence[CaseResult],
    spec: LoadsSpec | None,
    *,
    near_miss: float,
    snap: float,
    block: int = 32,
) -> tuple[Engineering, list[Finding]]:
    """The stage: envelope, checks, deflections and moving loads, with their findings.

    Raises ConfigError when a moving load's ends have no joint within ``near_miss`` or
    its segment does not follow one chord of members."""
    findings: list[Finding] = []
    moving = _moving_loads(truss, stability, spec, near_miss=near_miss, snap=snap, block=block, findings=findings)
    env = envelope(cases, moving, n_members=truss.n_members)
    ms = member_sections(truss, source=spec.path if spec else "loads file") if truss.sections else None
    checks = None
    if ms is not None and ms.given.any():
        checks = member_checks(
            truss,
            env,
            ms,
            limit=spec.check_ratio if spec else 1.0,
            slenderness_limit=spec.slenderness_limit if spec else 200.0,
        )
        findings += check_findings(truss, env, checks)
    return Engineering(env, ms, checks, tuple(deflections(truss, cases)), tuple(moving)), findings


def _moving_loads(
    truss: Truss,
    stability: Sequence[PartStability],
    spec: LoadsSpec | None,
    *,
    near_miss: float,
    snap: float,
    block: int,
    findings: list[Finding],
) -> list[MovingResult]:
    if spec is None or not spec.moving_loads or truss.n_joints == 0:
        return []
    tree = cKDTree(truss.xy)
    unit = truss.length_unit
    part_of = np.full(truss.n_members, -1, dtype=np.int64)
    for p in truss.parts:
        part_of[p.members] = p.index
    by_part = {int(s.part): s for s in stability}
    ea = member_ea(truss)
    factors: dict[int, PartFactor | None] = {}
    out = []
    for entry in spec.moving_loads:
        where = f"{spec.path}: [[moving_load]] #{entry.number} from {list(entry.start)} to {list(entry.end)}"
        js = []
        for key, point in (("from", entry.start), ("to", entry.end)):
            d, j = tree.query(np.asarray(point, dtype=float))
            if not d <= near_miss:
                raise ConfigError(
                    f"{where}: '{key}' has no joint within {near_miss:.6g} {unit}; the nearest is "
                    f"{joint_id(int(j))}, {float(d):.6g} {unit} away"
                )
            js.append(int(j))
        try:
            chain = find_chain(truss.xy, truss.ends, js[0], js[1], snap, unit)
        except ChainError as exc:
            raise ConfigError(f"{where}: does not follow members: {exc}; give from/to at joints of one chord") from None
        part = int(part_of[chain[0]])
        if part not in factors:
            factors[part] = factor_part(truss, truss.parts[part], by_part[part], ea)
        factor = factors[part]
        if factor is None:
            joints = truss.parts[part].joints
            findings.append(
                Finding(
                    Code.MOVING_LOAD_UNSOLVED,
                    f"moving load '{entry.name}': part {part + 1} is a mechanism or singular; no influence lines "
                    "are given for it",
                    joints=(int(joints[0]),),
                    at=(float(truss.xy[js[0], 0]), float(truss.xy[js[0], 1])),
                    data={"name": entry.name, "part": part},
                )
            )
            continue
        per_unit = 1.0 / LENGTH_UNITS[unit]  # drawing units per metre
        offsets = tuple(float(v) for v in np.concatenate([[0.0], np.cumsum(entry.spacings)]) * per_unit)
        vehicle = Vehicle(entry.loads, offsets)
        out.append(solve_moving(truss, factor, entry.name, part, chain, js[0], vehicle, block=block))
    return out
