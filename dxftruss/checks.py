"""Indicative member checks from the envelope and the sections: axial stress, the Euler
load, slenderness and two utilisation ratios. Indicative only, never a code design.

Glossary:
    L           the member length between its joints, m: taken as the effective
                (buckling) length, pin ends, unbraced between joints - the engineer
                decides the real one.
    stress      N / A, Pa, for the largest tension and the largest compression.
    Euler load  N_cr = pi^2 E I / L^2, N (Euler's critical load of a pin-ended strut;
                I the smaller second moment of area).
    slenderness L / r with r = sqrt(I / A).
    buckling    |N_c| / N_cr for a member in compression (N_c its largest compression).
    strength    max(|N_t|, |N_c|) / (A f), f the section's strength.
    ratio       the larger of the two utilisations; over the ``[checks] ratio`` (default
                1.0) it is flagged (``member-over-ratio``); L / r of a compression member
                over ``[checks] slenderness`` is flagged (``slender-member``).

Forces in the force unit in and out; stresses Pa; N_cr in the force unit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .envelope import Envelope
from .findings import Code, Finding
from .model import Truss, member_id
from .sections import MemberSections
from .units import FORCE_UNITS, LENGTH_UNITS

#: said on every page and report that shows the checks
CHECKS_CAUTION = (
    "member checks are indicative: Euler buckling of a pin-ended member over its length between joints, "
    "unbraced; buckling capacity to the applicable code, connections and bracing are the engineer's work"
)
#: L/r equal to the limit within this relative round-off passes (200.0 is not over 200)
SLENDER_TOL = 1e-9
#: at most this many members get a finding of each check code (the JSON has every member)
MAX_CHECK_FINDINGS = 100


@dataclass(frozen=True)
class MemberChecks:
    """Per member (m,), NaN where a value cannot be computed (no section, no I, no
    strength, never in compression, ...): ``length`` m, ``stress_t`` / ``stress_c`` Pa,
    ``euler`` force unit, ``slenderness``, ``buckling`` and ``strength`` utilisations,
    ``ratio`` the larger, ``kind`` "buckling" / "strength" / "" for it; ``limit`` and
    ``slenderness_limit`` as set."""

    length: np.ndarray
    stress_t: np.ndarray
    stress_c: np.ndarray
    euler: np.ndarray
    slenderness: np.ndarray
    buckling: np.ndarray
    strength: np.ndarray
    ratio: np.ndarray
    kind: tuple[str, ...]
    limit: float
    slenderness_limit: float | None


def member_checks(
    truss: Truss, env: Envelope, ms: MemberSections, *, limit: float = 1.0, slenderness_limit: float | None = None
) -> MemberChecks:
    """The indicative checks of every member (see the module glossary)."""
    newton = FORCE_UNITS[truss.force_unit]
    length = truss.lengths() * LENGTH_UNITS[truss.length_unit]
    nt = env.tension * newton
    nc = env.compression * newton
    with np.errstate(all="ignore"):
        stress_t = np.where(nt > 0, nt / ms.area, np.where(np.isfinite(nt), 0.0, np.nan))
        stress_c = np.where(nc < 0, nc / ms.area, np.where(np.isfinite(nc), 0.0, np.nan))
        euler_n = np.pi**2 * ms.modulus * ms.inertia / length**2
        slender = length / np.sqrt(ms.inertia / ms.area)
        buckling = np.where(nc < 0, -nc / euler_n, np.where(np.isfinite(nc), 0.0, np.nan))
        biggest = np.fmax(np.abs(nt), np.abs(nc))
        strength = biggest / (ms.area * ms.strength)
    ratio = np.fmax(buckling, strength)
    kind = tuple(
        "" if not np.isfinite(r) else ("buckling" if np.isfinite(b) and b >= r else "strength")
        for r, b in zip(ratio.tolist(), buckling.tolist(), strict=True)
    )
    return MemberChecks(
        length, stress_t, stress_c, euler_n / newton, slender, buckling, strength, ratio, kind, limit, slenderness_limit
    )


def _more_note(n: int, total: int, what: str) -> str:
    """On the last finding given (the ``n``-th), how many more of ``total`` were not."""
    if n == MAX_CHECK_FINDINGS - 1 and total > MAX_CHECK_FINDINGS:
        return f" ({total - MAX_CHECK_FINDINGS} more {what}; the JSON lists every check)"
    return ""


def check_findings(truss: Truss, env: Envelope, checks: MemberChecks) -> list[Finding]:
    """``member-over-ratio`` and ``slender-member`` findings (each capped at
    MAX_CHECK_FINDINGS members, worst first; the last says how many more)."""
    out: list[Finding] = []
    fu = truss.force_unit
    mid = truss.xy[truss.ends].mean(axis=1) if truss.n_members else np.zeros((0, 2))

    def source_of(e: int, compression: bool) -> str:
        k = int(env.compression_source[e] if compression else env.tension_source[e])
        return env.sources[k].name if k >= 0 else ""

    over = np.flatnonzero(np.nan_to_num(checks.ratio, nan=-1.0) > checks.limit)
    over = over[np.argsort(-checks.ratio[over], kind="stable")]
    for n, e in enumerate(over[:MAX_CHECK_FINDINGS].tolist()):
        kind = checks.kind[e]
        compression = kind == "buckling" or abs(env.compression[e]) >= abs(env.tension[e])
        force = float(env.compression[e] if compression else env.tension[e])
        case = source_of(e, compression)
        more = _more_note(n, over.size, "members are over the ratio")
        what = "|N| / N_cr (Euler, pin ends, length between joints)" if kind == "buckling" else "|N| / (A f)"
        out.append(
            Finding(
                Code.MEMBER_OVER_RATIO,
                f"{member_id(e)}: indicative utilisation {what} = {checks.ratio[e]:.3g}, over the ratio "
                f"{checks.limit:g}, under {force:.4g} {fu} in '{case}'{more}",
                members=(e,),
                at=(float(mid[e, 0]), float(mid[e, 1])),
                data={
                    "ratio": float(checks.ratio[e]),
                    "limit": checks.limit,
                    "kind": kind,
                    "case": case,
                    "force": force,
                },
            )
        )
    if checks.slenderness_limit is not None:
        slender = np.flatnonzero(
            (np.nan_to_num(checks.slenderness, nan=-1.0) > checks.slenderness_limit * (1 + SLENDER_TOL))
            & (env.compression < 0)
        )
        slender = slender[np.argsort(-checks.slenderness[slender], kind="stable")]
        for n, e in enumerate(slender[:MAX_CHECK_FINDINGS].tolist()):
            case = source_of(e, True)
            more = _more_note(n, slender.size, "slender members")
            out.append(
                Finding(
                    Code.SLENDER_MEMBER,
                    f"{member_id(e)}: slenderness L/r = {checks.slenderness[e]:.4g} (L between joints), over the "
                    f"limit {checks.slenderness_limit:g}, in compression in '{case}'{more}",
                    members=(e,),
                    at=(float(mid[e, 0]), float(mid[e, 1])),
                    data={
                        "slenderness": float(checks.slenderness[e]),
                        "limit": checks.slenderness_limit,
                        "case": case,
                    },
                )
            )
    return out
