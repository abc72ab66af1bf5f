"""Presentation of the QC-data results: proficiency scores, the reality check of a budget, the uncertainty
across the working range and detection limits, as terminal tables, JSON-ready dicts, CSV and SVG charts."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from .common import num

if TYPE_CHECKING:
    from rich.console import Console

    from ..qc.compare import Comparison
    from ..qc.limits import DetectionLimits
    from ..qc.proficiency import Proficiency
    from ..qc.range_fit import RangeFit


def to_json(result: Any) -> dict[str, Any]:
    """Any QC result object as a JSON object with its field names as keys."""
    from ..qc import plain

    out = plain(result)
    assert isinstance(out, dict)
    return out


# ---- proficiency -----------------------------------------------------------------------------------------


def _score(x: float | None) -> str:
    return "" if x is None else f"{x:.2f}"


def render_proficiency(console: Console, result: Proficiency) -> None:
    from rich.markup import escape
    from rich.table import Table

    table = Table(header_style="bold", title="Proficiency-testing scores (ISO 13528 9.4, 9.6, 9.7)",
                  title_justify="left")
    for col in ("round", "x_pt", "u(x_pt)", "x", "U(x)", "k", "z", "zeta", "E_n", "zeta verdict", "E_n verdict"):
        table.add_column(col, justify="left" if col in ("round", "zeta verdict", "E_n verdict") else "right")
    for r in result.rounds:
        table.add_row(escape(r.name), num(r.assigned, 4), num(r.u_assigned, 3), num(r.result, 4),
                      num(r.expanded, 3), num(r.k, 3), _score(r.z), _score(r.zeta), _score(r.en), r.verdict_zeta,
                      r.verdict_en)
    console.print(table)
    console.print(("[bold]flag:[/bold] " if result.u_too_small else "") + escape(result.message))


def proficiency_csv(result: Proficiency) -> str:
    import csv
    import io

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["round", "assigned", "u_assigned", "result", "U", "k", "sigma_pt", "z", "zeta", "E_n",
                     "zeta_verdict", "E_n_verdict"])
    for r in result.rounds:
        writer.writerow([_cell(r.name), repr(r.assigned), repr(r.u_assigned), repr(r.result), repr(r.expanded),
                         repr(r.k), "" if r.sigma_pt is None else repr(r.sigma_pt),
                         "" if r.z is None else repr(r.z), repr(r.zeta), repr(r.en), r.verdict_zeta, r.verdict_en])
    return buffer.getvalue()


def _cell(text: str) -> str:
    """Text for a CSV cell that a spreadsheet will not read as a formula."""
    return "'" + text if text[:1] in ("=", "+", "-", "@", "\t", "\r") else text


def proficiency_chart(result: Proficiency) -> str:
    """zeta (and z, E_n where given) per round with the 2 and 3 action lines; SVG text."""
    from .charts import _figure, _svg

    rounds = result.rounds
    plt, fig, ax = _figure(2.6)
    xs = list(range(len(rounds)))
    ax.plot(xs, [r.zeta for r in rounds], marker="o", color="black", linestyle="solid", linewidth=1.0,
            label="zeta (lab's u)")
    ax.plot(xs, [r.en for r in rounds], marker="s", color="#555555", linestyle="dotted", linewidth=1.0,
            label="E_n")
    zs = [(x, r.z) for x, r in zip(xs, rounds, strict=True) if r.z is not None]
    if zs:
        ax.plot([x for x, _ in zs], [z for _, z in zs], marker="^", color="#777777", linestyle="dashed",
                linewidth=0.8, label="z (sigma_pt)")
    for level, style in ((2, "dashed"), (3, "solid")):
        ax.axhline(level, color="black", linestyle=style, linewidth=0.6)
        ax.axhline(-level, color="black", linestyle=style, linewidth=0.6)
    ax.axhline(0, color="#999999", linewidth=0.5)
    ax.set_xticks(xs, [r.name[:20] for r in rounds], rotation=45, ha="right", fontsize=7)
    ax.set_ylabel("score")
    ax.legend(fontsize=7, frameon=False, loc="upper left")
    title = "PT scores; dashed ±2, solid ±3" + (" — stated U looks too small" if result.u_too_small else "")
    ax.set_title(title, fontsize=10, loc="left")
    return _svg(plt, fig)


# ---- compare ---------------------------------------------------------------------------------------------


def render_comparison(console: Console, result: Comparison) -> None:
    from rich.markup import escape
    from rich.table import Table

    from ..qc.compare import VERDICTS
    from .common import dof_text
    from .document import pretty_unit

    unit = pretty_unit(result.unit)
    u = f" {unit}" if unit else ""
    console.print(escape(f"budget: {result.measurand} = {num(result.budget_value, 5)}{u}, u_c = "
                         f"{num(result.budget_u, 3)}{u} ({100 * result.budget_u / abs(result.budget_value):.2f} %), "
                         f"dof {dof_text(result.budget_dof)}"))
    table = Table(header_style="bold", title="Budget against QC reproducibility", title_justify="left")
    for col in ("level", "QC mean", "n", f"s_Rw{u}", "dof", f"u budget{u}", "ratio u/s", "F = s²/u²", "p",
                "share explained"):
        table.add_column(escape(col), justify="left" if col == "level" else "right")
    for c in result.levels:
        table.add_row(escape(c.level or "all"), num(c.qc_mean, 4), str(c.qc_n), num(c.s_rw, 3),
                      dof_text(c.dof_qc), num(c.u_budget, 3), f"{c.ratio:.2f}", f"{c.f:.2f}", f"{c.p_value:.3g}",
                      f"{100 * c.share_explained:.0f} %")
    console.print(table)
    for c in result.levels:
        console.print(escape(f"verdict, {c.level or 'all QC data'}: {VERDICTS[c.verdict]} (two-sided F-test at "
                             f"5 %, dof {dof_text(c.dof_qc)} and {dof_text(c.dof_budget)}; {c.qc_source})"))
    for note in result.notes:
        console.print(escape(f"note: {note}"))


# ---- detection limits ------------------------------------------------------------------------------------


def limits_lines(limits: DetectionLimits, unit: str) -> list[str]:
    """Plain lines stating the limits and how they were found."""
    import math

    u = f" {unit}" if unit else ""
    parts = []
    if limits.critical is not None:
        parts.append(f"critical value {num(limits.critical, 3)}{u}")
    if math.isfinite(limits.lod):
        parts.append(f"LOD {num(limits.lod, 3)}{u}")
    if math.isfinite(limits.loq):
        parts.append(f"LOQ {num(limits.loq, 3)}{u}")
    head = f"Detection limits ({limits.method}, from {limits.source}): " + ", ".join(parts)
    return [head, *(f"  {w}" for w in limits.working)]


def render_limits(console: Console, limits: DetectionLimits, unit: str) -> None:
    from rich.markup import escape

    from .document import pretty_unit

    for line in limits_lines(limits, pretty_unit(unit)):
        console.print(escape(line))


# ---- working range ---------------------------------------------------------------------------------------


def render_range(console: Console, result: RangeFit, unit: str = "") -> None:
    from rich.markup import escape
    from rich.table import Table

    from .common import dof_text

    u = f" {unit}" if unit else ""
    table = Table(header_style="bold", title="Precision across the working range", title_justify="left")
    for col in ("level", f"c{u}", "n", f"s{u}", "dof", f"fitted u(c){u}", "s/c %", "s/fit"):
        table.add_column(escape(col), justify="left" if col == "level" else "right")
    for lv, f in zip(result.levels, result.fitted, strict=True):
        table.add_row(escape(lv.label), num(lv.level, 4), str(lv.n or ""), num(lv.s, 3), dof_text(lv.dof),
                      num(f, 3), f"{100 * lv.s / abs(lv.level):.2f}" if lv.level else "", f"{lv.s / f:.2f}")
    console.print(table)
    console.print(escape(f"u(c) = sqrt(u0^2 + (b c)^2) with u0 = {num(result.u0, 3)}{u} (standard uncertainty "
                         f"{num(result.u_u0, 2)}), b = {num(result.b, 3)} (standard uncertainty "
                         f"{num(result.u_b, 2)})"))
    if result.b > 0:
        console.print(escape(f"the floor and the relative part are equal at c = u0/b = "
                             f"{num(result.u0 / result.b, 3)}{u}"))


def range_chart(result: RangeFit, unit: str = "") -> str:
    """s at each level with its standard uncertainty s/sqrt(2 nu), and the fitted u(c); SVG text."""
    import numpy as np

    from .charts import _figure, _svg

    plt, fig, ax = _figure(2.8)
    c = np.array([lv.level for lv in result.levels])
    s = np.array([lv.s for lv in result.levels])
    err = s / np.sqrt(2 * np.array([min(lv.dof, 1e6) for lv in result.levels]))
    ax.errorbar(c, s, yerr=err, fmt="o", color="black", capsize=3, markersize=4, label="s at each level (± u(s))")
    xs = np.linspace(0, c.max() * 1.05, 200)
    ax.plot(xs, np.hypot(result.u0, result.b * xs), color="black", linewidth=1.2, label="fit sqrt(u0² + (b c)²)")
    ax.plot(xs, np.full_like(xs, result.u0), color="#666666", linestyle="dotted", linewidth=1.0, label="u0")
    ax.plot(xs, result.b * xs, color="#666666", linestyle="dashed", linewidth=1.0, label="b c")
    label = f" / {unit}" if unit else ""
    ax.set_xlabel(f"level c{label}")
    ax.set_ylabel(f"standard uncertainty{label}")
    ax.set_ylim(bottom=0)
    ax.legend(fontsize=7, frameon=False, loc="upper left")
    ax.set_title("Uncertainty across the working range", fontsize=10, loc="left")
    return _svg(plt, fig)
