"""One call per CLI command: load a budget and run the requested engines, returning plain results."""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

from .budget.definitions import Budget
from .engines.gum import GumResult

if TYPE_CHECKING:
    from .engines.montecarlo import MonteCarloResult, Progress
    from .planning import Improvement

Method = Literal["gum", "mc", "both"]
MAX_TRIALS = 100_000_000  # the values of every trial are kept (8 bytes each) for the coverage interval


@dataclass(frozen=True)
class Evaluation:
    """A budget with the results of the engines that were run on it (``mc`` is None for the GUM alone)."""

    budget: Budget
    gum: GumResult
    mc: MonteCarloResult | None = None
    method: Method = "gum"


@dataclass(frozen=True)
class MonteCarloOptions:
    trials: int = 1_000_000
    seed: int | None = None
    adaptive: bool = False
    digits: int = 2
    block_size: int | None = None


def check_budget(path: str | Path) -> Budget:
    """Load and validate a budget (raises BudgetErrors listing every problem)."""
    from .api import load

    return load(path)


def evaluate_budget(budget: Budget, *, method: Method = "gum", second_order: bool = False,
                    mc: MonteCarloOptions | None = None, progress: Progress | None = None) -> Evaluation:
    """Propagate a loaded budget by the GUM and, if asked, by Monte Carlo with the GUM validated against it."""
    from .errors import ComputationError, Location

    trials = (mc or MonteCarloOptions()).trials
    if method != "gum" and trials > MAX_TRIALS:
        raise ComputationError(f"{trials:,} trials is more than the {MAX_TRIALS:,} this tool runs; 10^6 usually "
                               "suffice (JCGM 101 7.2.2), or use --adaptive", subject="trials",
                               location=Location(budget.source))
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # non-finite values are counted and reported
            return _evaluate(budget, method, second_order, mc, progress)
    except OverflowError:
        raise ComputationError("a term of the propagation overflows (the second-order terms, with such large "
                               "uncertainties?); express the inputs in other units or use Monte Carlo",
                               location=Location(budget.source)) from None
    except MemoryError:
        raise ComputationError(f"not enough memory for {trials:,} Monte Carlo trials; give fewer with --trials",
                               location=Location(budget.source)) from None


def _evaluate(budget: Budget, method: Method, second_order: bool, mc: MonteCarloOptions | None,
              progress: Progress | None) -> Evaluation:
    from .api import propagate, simulate

    gum = propagate(budget, second_order=second_order)
    if method == "gum" and budget.reporting is not None and budget.reporting.method == "monte-carlo":
        method = "both"  # the budget states its result by Monte Carlo
    if method == "gum":
        return Evaluation(budget, gum, None, method)
    options = mc or MonteCarloOptions()
    result = simulate(budget, options.trials, options.seed, adaptive=options.adaptive, digits=options.digits,
                      block_size=options.block_size, progress=progress, gum=gum)
    return Evaluation(budget, gum, result, method)


def evaluate(path: str | Path, *, method: Method = "gum", second_order: bool = False,
             mc: MonteCarloOptions | None = None, progress: Progress | None = None,
             settings: list[str] | None = None) -> Evaluation:
    """Load a budget file, apply ``--set`` changes, and evaluate it (see :func:`evaluate_budget`)."""
    budget = load_with_settings(path, settings)[1] if settings else check_budget(path)
    return evaluate_budget(budget, method=method, second_order=second_order, mc=mc, progress=progress)


ReportKind = Literal["html", "md", "pdf"]
REPORT_SUFFIXES: dict[str, ReportKind] = {".html": "html", ".htm": "html", ".md": "md", ".markdown": "md",
                                          ".pdf": "pdf"}


def report_format(output: str | Path, fmt: str | None = None) -> ReportKind:
    """The report format named by ``fmt`` or by the output's extension; an unknown or contradicting one is refused."""
    from .outputs import OutputError

    suffix = Path(output).suffix.lower()
    by_name = REPORT_SUFFIXES.get(suffix)
    if fmt is None:
        if by_name is None:
            what = f"extension '{suffix}'" if suffix else "no extension"
            raise OutputError(output, f"{what} is not a report format; name the file .html, .pdf or .md")
        return by_name
    if by_name is not None and by_name != fmt:
        raise OutputError(output, f"the extension '{suffix}' says {by_name}, but --format says {fmt}; "
                                  "make them agree")
    if fmt not in ("html", "md", "pdf"):
        raise OutputError(output, f"'{fmt}' is not a report format; use html, pdf or md")
    return fmt  # type: ignore[return-value]


def render_report(evaluation: Evaluation, fmt: Literal["html", "md"], *, digits: int = 2) -> str:
    """The report document for an evaluation, as HTML (with charts) or Markdown."""
    from .reports import document

    context = document.build(evaluation.budget, evaluation.gum, evaluation.mc, digits=digits, charts=fmt == "html")
    if fmt == "html":
        from .reports import html

        return html.render(context)
    from .reports import markdown

    return markdown.render(context)


def report(path: str | Path, output: str | Path, *, fmt: str | None = None, method: Method = "both",
           mc: MonteCarloOptions | None = None, force: bool = False, digits: int = 2,
           progress: Progress | None = None, settings: list[str] | None = None) -> Path:
    """Evaluate a budget and write its report atomically (never over the budget; existing file only if forced).

    ``fmt`` is html, md or pdf (default: from the output's extension). The output is checked before the
    (possibly long) evaluation, so a wrong path fails at once.
    """
    from .outputs import check_target, write_atomic

    check_target(output, force=force, inputs=[path])
    kind = report_format(output, fmt)
    if kind == "pdf":
        from .reports import pdf

        pdf.require()
    evaluation = evaluate(path, method=method, mc=mc, progress=progress, settings=settings)
    if kind == "pdf":
        data: str | bytes = pdf.render(render_report(evaluation, "html", digits=digits))
    else:
        data = render_report(evaluation, kind, digits=digits)
    return write_atomic(output, data, force=force, inputs=[path])


def load_with_settings(path: str | Path, settings: list[str] | None = None) -> tuple[Any, Budget]:
    """The budget's parsed document and the budget built from it, with ``--set`` changes applied."""
    import dataclasses

    from .budget.load import build_budget, load_document
    from .scenarios import apply_settings

    doc = load_document(path)
    if settings:
        doc = dataclasses.replace(doc, data=apply_settings(doc.data, settings))
    budget = build_budget(doc, sha_of=path)
    return doc, dataclasses.replace(budget, settings=tuple(settings or ()))


def improve(path: str | Path, *, target: str | None = None, settings: list[str] | None = None) -> Improvement:
    """What each change to the budget would buy, and the fewest actions that reach ``target``."""
    from .errors import ComputationError
    from .planning import improve as plan

    doc, budget = load_with_settings(path, settings)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            return plan(doc, budget, target)
    except ComputationError as exc:
        raise exc.located(str(path)) from None
