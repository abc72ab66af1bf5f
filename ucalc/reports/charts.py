"""Charts for reports, drawn with matplotlib (imported only here) and returned as SVG text.

Designed to read in black-and-white print: bars carry hatching, curves differ by line style, and every mark is
labelled in the legend.
"""

from __future__ import annotations

import io
import math
from typing import TYPE_CHECKING

from .common import dof_text, share_text

if TYPE_CHECKING:
    from ..engines.gum import GumResult
    from ..engines.montecarlo import MonteCarloResult

WIDTH_IN = 6.4


def _figure(height: float):  # type: ignore[no-untyped-def]
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    plt.rcParams.update({"svg.fonttype": "none", "font.size": 9, "font.family": "sans-serif",
                         "axes.spines.top": False, "axes.spines.right": False, "svg.hashsalt": "ucalc"})
    fig, ax = plt.subplots(figsize=(WIDTH_IN, height))
    return plt, fig, ax


def _svg(plt, fig) -> str:  # type: ignore[no-untyped-def]
    buffer = io.StringIO()
    fig.savefig(buffer, format="svg", bbox_inches="tight", metadata={"Date": None})
    plt.close(fig)
    text = buffer.getvalue()
    return text[text.index("<svg"):]  # drop the XML prolog so the SVG can sit inline in HTML


def contribution_chart(gum: GumResult, unit: str, most: int = 12) -> str:
    """Horizontal bars of |c_i| u(x_i), largest on top, with each input's share of u_c^2."""
    rows = list(gum.contributions[:most])[::-1]
    plt, fig, ax = _figure(0.3 * len(rows) + 0.9)
    values = [r.contribution for r in rows]
    bars = ax.barh([r.input for r in rows], values, color="#b8c4d6", edgecolor="black", hatch="///",
                   linewidth=0.6)
    for bar, row in zip(bars, rows, strict=True):
        # an offset in points, not leading spaces: SVG collapses white space, and the label would touch the bar
        ax.annotate(f"{share_text(row.variance_share)} %", (bar.get_width(), bar.get_y() + bar.get_height() / 2),
                    xytext=(4, 0), textcoords="offset points", va="center", fontsize=8)
    ax.set_xlabel("u_i(y) = |c_i|·u(x_i)" + (f" / {unit}" if unit else ""))
    ax.set_xlim(0, max(values) * 1.3 if max(values) > 0 else 1)
    ax.set_title("Contributions to the combined standard uncertainty", fontsize=10, loc="left")
    return _svg(plt, fig)


def distribution_chart(gum: GumResult, mc: MonteCarloResult, unit: str) -> str:
    """Histogram of the Monte Carlo output with the GUM distribution overlaid and both intervals marked."""
    import numpy as np
    from scipy import stats

    hist = mc.histogram
    edges = np.array(hist.edges)
    counts = np.array(hist.counts, dtype=float)
    width = edges[1] - edges[0]
    density = counts / (mc.trials * width) if mc.trials else counts
    plt, fig, ax = _figure(2.4)
    ax.bar(edges[:-1], density, width=width, align="edge", color="#d9d9d9", edgecolor="#555555", linewidth=0.3,
           label="Monte Carlo")
    xs = np.linspace(edges[0], edges[-1], 400)
    if gum.standard_uncertainty > 0:
        if math.isinf(gum.effective_dof):
            pdf = stats.norm.pdf(xs, gum.value, gum.standard_uncertainty)
            label = "GUM: Gaussian"
        else:
            pdf = stats.t.pdf((xs - gum.value) / gum.standard_uncertainty, gum.effective_dof) / gum.standard_uncertainty
            label = f"GUM: t, {dof_text(gum.effective_dof)} dof"
        ax.plot(xs, pdf, color="black", linewidth=1.4, label=label)
    top = max(float(density.max()) if len(density) else 1.0, 1e-300)
    lo, hi = gum.value - gum.expanded_uncertainty, gum.value + gum.expanded_uncertainty
    ax.vlines([lo, hi], 0, top * 1.05, colors="black", linestyles="solid", linewidth=1.0, label="GUM y ± U")
    ax.vlines(list(mc.interval), 0, top * 1.05, colors="black", linestyles="dashed", linewidth=1.0,
              label="MC symmetric interval")
    ax.vlines(list(mc.shortest_interval), 0, top * 0.9, colors="#444444", linestyles="dotted", linewidth=1.4,
              label="MC shortest interval")
    ax.set_xlabel(f"{gum.measurand}" + (f" / {unit}" if unit else ""))
    ax.set_ylabel("probability density")
    ax.set_yticks([])
    # the legend beside the plot, never over the bars
    ax.legend(fontsize=7, frameon=False, loc="upper left", bbox_to_anchor=(1.0, 1.0), handletextpad=1.0)
    ax.set_title(f"Output distribution, {mc.trials:,} trials", fontsize=10, loc="left")
    return _svg(plt, fig)


def residual_chart(residuals: list[dict[str, float]], s: float, unit: str, response_unit: str) -> str:
    """Residuals of a calibration function against the standards, with the zero line and ±2 s (ISO 8466-1)."""
    plt, fig, ax = _figure(2.4)
    xs = [r["x"] for r in residuals]
    es = [r["residual"] for r in residuals]
    ax.axhline(0.0, color="black", linewidth=0.8)
    for level in (2 * s, -2 * s):
        ax.axhline(level, color="black", linewidth=0.8, linestyle="--")
    ax.plot(xs, es, linestyle="none", marker="o", markerfacecolor="white", markeredgecolor="black",
            label="residual y − f(x)")
    ax.plot([], [], color="black", linewidth=0.8, linestyle="--", label="±2 s")
    ax.set_xlabel("standard" + (f" / {unit}" if unit else ""))
    ax.set_ylabel("residual" + (f" / {response_unit}" if response_unit else ""))
    ax.legend(frameon=False, fontsize=8)
    return _svg(plt, fig)
