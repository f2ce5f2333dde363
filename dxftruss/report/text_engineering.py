"""The terminal summary's engineering section: the governing members of the envelope,
the worst indicative member checks, self-weight, deflections and moving loads, with
the checks' caution. Every string goes through ``text._text`` (escaped, never markup)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from ..checks import CHECKS_CAUTION
from ..model import joint_id, member_id

if TYPE_CHECKING:
    from ..result import Result

#: rows of each engineering table in the terminal (the JSON and PDF have more)
ROWS = 5


def engineering_summary(result: Result, con: Any, text: Any, fmt: Any) -> None:
    """Print the engineering tables to the rich console ``con`` (``text`` makes an
    escaped Text, ``fmt`` formats a number)."""
    from rich import box
    from rich.table import Table

    eng = result.engineering
    if eng is None or not (result.cases or eng.moving):
        return
    t = result.truss
    if len(eng.envelope.sources) < 2 and not (eng.checks or eng.deflections or eng.moving or t.self_weight):
        return  # one case and nothing else: its row in the load-case table says it all
    fu = t.force_unit
    unit = result.source.length_unit
    env = eng.envelope
    names = [s.name for s in env.sources]
    top = env.top(ROWS) if len(names) > 1 else []
    if top:
        tab = Table(
            box=box.SIMPLE_HEAD,
            title=f"envelope: governing members ({fu}; over {len(names)} cases, combinations and moving loads)",
            title_justify="left",
            pad_edge=False,
        )
        for col in ("member", "largest tension", "from", "largest compression", "from"):
            tab.add_column(col)
        for e in top:
            ts, cs = int(env.tension_source[e]), int(env.compression_source[e])
            tab.add_row(
                text(member_id(e)),
                text(fmt(env.tension[e]) if env.tension[e] > 0 else "-"),
                text(_where(names, ts, env.tension_station[e], unit) if env.tension[e] > 0 else ""),
                text(fmt(env.compression[e]) if env.compression[e] < 0 else "-"),
                text(_where(names, cs, env.compression_station[e], unit) if env.compression[e] < 0 else ""),
            )
        con.print(tab)
    ch = eng.checks
    if ch is not None:
        order = [int(e) for e in np.argsort(-np.nan_to_num(ch.ratio, nan=-1.0), kind="stable")[:ROWS]]
        order = [e for e in order if np.isfinite(ch.ratio[e])]
        tab = Table(
            box=box.SIMPLE_HEAD,
            title=f"indicative member checks (ratio limit {ch.limit:g}, slenderness limit {ch.slenderness_limit:g})",
            title_justify="left",
            pad_edge=False,
        )
        for col in ("member", "ratio", "governs", f"N_cr ({fu})", "L/r", "stress (MPa)"):
            tab.add_column(col)
        for e in order:
            stress = np.nanmax(np.abs([ch.stress_t[e], ch.stress_c[e]])) / 1e6
            flag = " OVER" if ch.ratio[e] > ch.limit else ""
            tab.add_row(
                text(member_id(e)),
                text(f"{ch.ratio[e]:.3g}{flag}"),
                text(ch.kind[e]),
                text(fmt(ch.euler[e]) if np.isfinite(ch.euler[e]) else "-"),
                text(f"{ch.slenderness[e]:.4g}" if np.isfinite(ch.slenderness[e]) else "-"),
                text(f"{stress:.4g}"),
            )
        if order:
            con.print(tab)
        without = int(np.count_nonzero(~eng.sections.given)) if eng.sections is not None else 0
        if without:
            con.print(text(f"{without} member(s) have no section: no check for them (see assumed-stiffness)"))
    sw = t.self_weight
    if sw is not None:
        parts = ", ".join(f"{result.part_name(k)} {fmt(w)} {fu}" for k, w in enumerate(sw.per_part))
        con.print(text(f"self-weight (case '{sw.case}'): {fmt(sum(sw.per_part))} {fu} in all; per part: {parts}"))
    if eng.deflections:
        tab = Table(
            box=box.SIMPLE_HEAD,
            title=f"largest deflection per part ({unit}; stiffness solution with the sections)",
            title_justify="left",
            pad_edge=False,
        )
        for col in ("case", "part", "joint", "dy", "span / deflection"):
            tab.add_column(col)
        for d in eng.deflections[: 3 * ROWS]:
            tab.add_row(
                text(d.case),
                text(result.part_name(d.part)),
                text(joint_id(d.joint)),
                text(fmt(d.dy)),
                text(f"{d.ratio:.0f} (span {fmt(d.span)} between {d.span_from})" if d.ratio else "-"),
            )
        con.print(tab)
    for mv in eng.moving:
        ext = mv.extremes
        members = mv.members if mv.complete else t.parts[mv.part].members
        worst = sorted(
            (int(e) for e in members),
            key=lambda e: -max(abs(np.nan_to_num(ext.tmax[e])), abs(np.nan_to_num(ext.cmin[e]))),
        )[:3]
        axles = " + ".join(fmt(v) for v in mv.vehicle.loads)

        def extreme(e: int, ext: Any = ext) -> str:
            out = []
            if ext.tmax[e] > 0:
                out.append(f"+{fmt(ext.tmax[e])} with the front axle at {fmt(ext.tmax_at[e])}")
            if ext.cmin[e] < 0:
                out.append(f"{fmt(ext.cmin[e])} with the front axle at {fmt(ext.cmin_at[e])}")
            return f"{member_id(e)} " + " and ".join(out)

        said = "; ".join(extreme(e) for e in worst)
        con.print(
            text(
                f"moving load '{mv.name}' ({axles} {fu}, {mv.positions} positions on {len(mv.panel_joints)} panel "
                f"points): {said} ({unit} from the start of the chord)"
            )
        )
    con.print(text("caution: " + CHECKS_CAUTION, "italic"))


def _where(names: list[str], k: int, station: float, unit: str) -> str:
    if k < 0:
        return ""
    return names[k] + (f" at {station:.4g} {unit}" if np.isfinite(station) else "")
