"""Turning a budget file into a validated :class:`~ucalc.budget.definitions.Budget`.

Parse (YAML with locations), validate (pydantic shapes, names, units, correlations) and build (input models,
compiled model) in one pass that gathers every problem, so ``ucalc check`` can list them all at once. Each
problem names the file, line, column and the input or model line concerned.
"""

from __future__ import annotations

import difflib
import hashlib
import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ValidationError

from .. import expr, units
from ..errors import BudgetError, BudgetErrors, ExpressionError, Location
from .definitions import Budget, Coverage, DocumentControl, Measurand, Model, ModelLine, Quantity, Reporting
from .schema import BudgetSpec, CorrelationSpec, CoverageSpec, MeasurandSpec
from .yamlio import Document, PathKey, load_yaml, parse_yaml

_LINE = re.compile(r"^(\s*)([A-Za-z][A-Za-z0-9_]*)\s*=(?!=)(.*)$")


def load_document(path: str | Path) -> Document:
    """Read a budget file's YAML with locations; raise :class:`BudgetErrors` on a file or syntax problem."""
    try:
        return load_yaml(path)
    except BudgetError as exc:
        raise BudgetErrors([exc]) from None


def load_budget(path: str | Path) -> Budget:
    """Read, validate and build a budget file; raise :class:`BudgetErrors` listing every problem."""
    return build_budget(load_document(path), sha_of=path)


def load_budget_text(text: str, file: str = "<budget>") -> Budget:
    """Like :func:`load_budget` for text already in memory (tests, fuzzing, scenarios)."""
    try:
        doc = parse_yaml(text, file)
    except BudgetError as exc:
        raise BudgetErrors([exc]) from None
    return build_budget(doc)


def load_data(data: Any, file: str = "<dict>") -> Budget:
    """Like :func:`load_budget` for a budget given as Python data (mappings, lists, text and numbers).

    Problems name the quantity but no line. The SHA-256 is that of the data as canonical JSON.
    """
    import json

    try:
        text = json.dumps(data, sort_keys=True, ensure_ascii=False)
    except (TypeError, ValueError) as exc:
        raise BudgetErrors([BudgetError(f"budget data must be mappings, lists, text and numbers ({exc})",
                                        location=Location(file))]) from None
    doc = Document(file, json.loads(text), "")  # a deep copy holding only plain types
    return _replace(_build(doc), sha256=hashlib.sha256(text.encode("utf-8")).hexdigest())


def _replace(budget: Budget, **changes: Any) -> Budget:
    import dataclasses

    return dataclasses.replace(budget, **changes)


# ---- pydantic errors as located one-line messages ---------------------------------------------------------


def _path_text(loc: tuple[Any, ...]) -> str:
    out = ""
    for part in loc:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out


def _rule(err: dict[str, Any], valid: list[str]) -> str:
    kind = err["type"]
    ctx = err.get("ctx") or {}
    got = err.get("input")
    field = str(err["loc"][-1]) if err["loc"] else ""
    if kind == "missing":
        return f"missing key '{field}'"
    if kind == "extra_forbidden" and field.isdigit():
        return (f"unknown key '{field}': a number written with a decimal comma splits in two inside {{...}} "
                f"(',{field}' became a key); write the decimal point '.'")
    if kind == "extra_forbidden":
        close = difflib.get_close_matches(field, valid, n=1)
        hint = f"; did you mean '{close[0]}'?" if close else (f"; valid keys: {', '.join(valid)}" if valid else "")
        return f"unknown key '{field}'{hint}"
    bound = {"greater_than": ("gt", "greater than"), "greater_than_equal": ("ge", "at least"),
             "less_than": ("lt", "less than"), "less_than_equal": ("le", "at most")}
    if kind in bound:
        key, words = bound[kind]
        return f"must be {words} {ctx.get(key):g} (got {got!r})"
    if kind in ("float_parsing", "float_type", "int_parsing", "int_type", "int_from_float"):
        if isinstance(got, str) and re.fullmatch(r"\s*[-+]?\d*,\d+\s*", got):
            fixed = got.strip().replace(",", ".")
            return f"{got!r} is not a number; write it with a decimal point: {fixed}"
        return f"must be a number (got {got!r})"
    if kind == "finite_number":
        return "must be a finite number"
    if kind == "literal_error":
        return f"must be one of {ctx.get('expected')} (got {got!r})"
    if kind in ("string_type",):
        return f"must be text (got {got!r})"
    if kind in ("dict_type", "model_type", "model_attributes_type"):
        return "must be a mapping of keys to values"
    if kind == "list_type":
        return "must be a list"
    if kind in ("bool_type", "bool_parsing"):
        return f"must be true or false (got {got!r})"
    if kind in ("too_short", "too_long"):
        return str(err["msg"]).replace("List", "list").replace("Dictionary", "mapping")
    msg = str(err["msg"])
    return msg.removeprefix("Value error, ").removeprefix("Assertion failed, ")


def _fields(model: type[BaseModel], loc: tuple[Any, ...]) -> list[str]:
    """Valid keys of the (nested) pydantic model a location points into, for 'did you mean' hints."""
    current: Any = model
    for part in loc[:-1]:
        if isinstance(part, int):
            continue
        field = getattr(current, "model_fields", {}).get(part)
        if field is None:
            return []
        ann = field.annotation
        args = getattr(ann, "__args__", ())
        candidates = [a for a in (ann, *args) if isinstance(a, type) and issubclass(a, BaseModel)]
        if not candidates:
            return []
        current = candidates[0]
    return list(getattr(current, "model_fields", {}))


def validation_errors(
    exc: ValidationError, model: type[BaseModel], doc: Document, prefix: PathKey, subject: str
) -> list[BudgetError]:
    """One located error per pydantic error; at the top level (no ``subject``) the subject comes from the error's
    ``loc``: "input 'V'", 'correlation 2', or the top-level key."""
    out = []
    for err in exc.errors():
        loc = tuple(p for p in err["loc"] if isinstance(p, str | int))
        rule = _rule(dict(err), _fields(model, loc))
        key_error = err["type"] == "extra_forbidden"
        target = (*prefix, *loc) if err["type"] != "missing" else (*prefix, *loc[:-1])
        named, rest = subject, loc
        if err["type"] not in ("missing", "extra_forbidden"):
            if not subject:
                named, rest = _subject_of(loc)
            where = _path_text(rest)
            rule = f"{where}: {rule}" if where else rule
        out.append(BudgetError(rule, location=doc.locate(target, key=key_error), subject=named))
    return out


def _subject_of(loc: tuple[str | int, ...]) -> tuple[str, tuple[str | int, ...]]:
    """The subject a top-level location names and the rest of the location within it."""
    if len(loc) >= 2 and loc[0] == "inputs" and isinstance(loc[1], str):
        return f"input '{loc[1]}'", loc[2:]
    if len(loc) >= 2 and loc[0] == "correlations" and isinstance(loc[1], int):
        return f"correlation {loc[1] + 1}", loc[2:]
    if loc and isinstance(loc[0], str):
        return loc[0], loc[1:]
    return "", loc


# ---- building --------------------------------------------------------------------------------------------


def build_budget(doc: Document, sha_of: str | Path | None = None) -> Budget:
    """Validate and build a parsed document; raise :class:`BudgetErrors` with every problem found.

    ``sha_of``: the file whose SHA-256 identifies the budget in reports (default: the document's text).
    """
    budget = _build(doc)
    raw = Path(sha_of).read_bytes() if sha_of is not None else doc.text.encode("utf-8")
    return _replace(budget, sha256=hashlib.sha256(raw).hexdigest())


def _build(doc: Document) -> Budget:
    errors: list[BudgetError] = []
    data = doc.data
    if not isinstance(data, dict):
        raise BudgetErrors([BudgetError("a budget must be a YAML mapping with keys 'ucalc', 'title', "
                                        "'measurand', 'model' and 'inputs'", location=Location(doc.file, 1, 1))])

    top = dict(data)
    raw_inputs = top.get("inputs")
    if isinstance(raw_inputs, dict):
        top["inputs"] = {k: (v if isinstance(v, dict) else {}) for k, v in raw_inputs.items()}
    spec: BudgetSpec | None = None
    try:
        spec = BudgetSpec.model_validate(top)
    except ValidationError as exc:
        errors.extend(validation_errors(exc, BudgetSpec, doc, (), ""))

    raw_items = top.get("items")
    uses = None
    if isinstance(raw_inputs, dict):
        from ..inputs import shared

        raw_items = raw_items if isinstance(raw_items, dict) else {}
        raw_inputs, uses = shared.resolve(raw_items, raw_inputs)
        for path, item in uses.unknown:
            errors.append(BudgetError(f"unknown item '{item}'; items declared: {', '.join(raw_items) or 'none'}",
                                      location=doc.locate((*path, "use")), subject=f"input '{path[1]}'"))
    built = _build_inputs(raw_inputs, doc, errors)
    if uses is not None:
        for a, b, r, origin in shared.correlations(uses, built.quantities):
            built.correlations[(a, b) if a < b else (b, a)] = r
            built.origins[(a, b) if a < b else (b, a)] = origin
        built.warnings += tuple(f"item '{item}' is declared but not used" for item, names in uses.by_item.items()
                                if not names)
    quantities, correlations_extra, failed = built.quantities, built.correlations, built.failed

    measurand = _part(top, "measurand", MeasurandSpec, doc, spec)
    coverage = _part(top, "coverage", CoverageSpec, doc, spec) or CoverageSpec(probability=0.95)
    model: Model | None = None
    if isinstance(top.get("model"), str) and isinstance(measurand, MeasurandSpec):
        model = _build_model(top["model"], measurand, quantities, failed, doc, errors, built.lines)

    correlations = dict(correlations_extra)
    origins = dict(built.origins)
    raw_corr = top.get("correlations")
    if isinstance(raw_corr, list):
        stated = _build_correlations(raw_corr, quantities, doc, errors, failed)
        correlations.update(stated)
        origins.update({pair: "stated in the budget ('correlations')" for pair in stated})

    if model is not None and not errors:
        _check_at_estimate(model, quantities, doc, errors)
    limits = _build_limits(top.get("limits"), raw_inputs, doc, errors)

    if errors or spec is None or model is None or not isinstance(measurand, MeasurandSpec):
        if not errors:  # pragma: no cover - every failed part records an error
            errors.append(BudgetError("budget is incomplete", location=Location(doc.file, 1, 1)))
        raise BudgetErrors(errors)

    defined = {line.name for line in model.lines}
    warnings = built.warnings + tuple(
        f"input '{name}' is not used by the model"
        for name in spec.inputs if name in quantities and name not in model.inputs and name not in defined
    ) + _slips(quantities)
    return Budget(
        title=spec.title,
        measurand=Measurand(measurand.symbol, measurand.unit or "", measurand.description or ""),
        model=model,
        quantities=quantities,
        correlations=correlations,
        coverage=Coverage(coverage.probability, coverage.k, coverage.dof_rounding),
        source=doc.file,
        warnings=warnings,
        working=built.working,
        correlation_origins=origins,
        details=built.details,
        raw_inputs=built.raw,
        limits=limits,
        reporting=Reporting(spec.reporting.method, spec.reporting.reason) if spec.reporting else None,
        document=_document(spec),
    )


def _document(spec: BudgetSpec) -> DocumentControl | None:
    d = spec.document
    if d is None:
        return None
    signoffs = tuple((role, s.by, s.date or "")
                     for role, s in (("prepared", d.prepared), ("reviewed", d.reviewed), ("approved", d.approved))
                     if s is not None)
    return DocumentControl(d.method or "", d.id or "", "" if d.version is None else str(d.version), signoffs)


def _part(top: dict[str, Any], key: str, model: type[BaseModel], doc: Document, spec: BudgetSpec | None) -> Any:
    if spec is not None:
        return getattr(spec, key)
    raw = top.get(key)
    if raw is None:
        return None
    try:
        return model.model_validate(raw)
    except ValidationError:
        return None  # already reported by the top-level validation


@dataclass
class _Inputs:
    """What the inputs section builds: quantities, correlations among them, model lines that input models
    define (a dilution factor as the product of its steps), warnings, and the names of inputs that failed."""

    quantities: dict[str, Quantity] = field(default_factory=dict)
    correlations: dict[tuple[str, str], float] = field(default_factory=dict)
    lines: list[tuple[str, str, Location]] = field(default_factory=list)
    warnings: tuple[str, ...] = ()
    failed: set[str] = field(default_factory=set)
    working: dict[str, tuple[str, tuple[str, ...]]] = field(default_factory=dict)
    origins: dict[tuple[str, str], str] = field(default_factory=dict)
    details: dict[str, dict[str, Any]] = field(default_factory=dict)
    raw: dict[str, dict[str, Any]] = field(default_factory=dict)


def _same_quantity(a: Quantity, b: Quantity) -> bool:
    return (a.value, a.unit, a.components) == (b.value, b.unit, b.components)


def _build_inputs(raw_inputs: Any, doc: Document, errors: list[BudgetError]) -> _Inputs:
    """Build every input; inputs that fail are remembered so that the model does not report them again."""
    out = _Inputs()
    if not isinstance(raw_inputs, dict):
        return out
    for name, raw in raw_inputs.items():
        before = len(errors)
        _build_input(name, raw, doc, errors, out)
        if len(errors) > before:
            out.failed.add(name)
    return out


def _build_input(name: str, raw: Any, doc: Document, errors: list[BudgetError], out: _Inputs) -> None:
    """Validate one input with its input model and add what it derives to ``out``."""
    from ..inputs.base import model_for

    subject = f"input '{name}'"
    path: PathKey = ("inputs", name)
    if not isinstance(raw, dict):
        errors.append(BudgetError("must be a mapping (value, unit, components, ...)",
                                  location=doc.locate(path), subject=subject))
        return
    out.raw[name] = raw
    model = model_for(raw)
    try:
        spec = model.Spec.model_validate(raw)
    except ValidationError as exc:
        errors.extend(validation_errors(exc, model.Spec, doc, path, subject))
        return
    unit_text = getattr(spec, "unit", None)
    try:
        unit = units.parse_unit(unit_text)
        if units.is_offset(unit):
            raise ExpressionError(f"unit '{unit_text}' has an offset zero and cannot enter a product; "
                                  "give temperature differences in K")
    except ExpressionError as exc:
        errors.append(BudgetError(exc.rule, location=doc.locate((*path, "unit")), subject=subject))
        return
    try:
        derived = model.build(name, spec, doc.locate(path, key=True))
    except (ValueError, ArithmeticError) as exc:
        location = getattr(exc, "location", None) or doc.locate(path, key=True)
        errors.append(BudgetError(str(exc), location=location, subject=subject))
        return
    for q in derived.quantities:
        shared = out.quantities.get(q.name)
        if shared is not None and _same_quantity(shared, q):
            continue  # a shared quantity, such as an element's atomic weight used by two molar masses
        if shared is not None:
            errors.append(BudgetError(f"quantity '{q.name}' is defined twice",
                                      location=doc.locate(path, key=True), subject=subject))
        finite = math.isfinite(q.value) and all(math.isfinite(c.standard_uncertainty) for c in q.components)
        if not finite:
            errors.append(BudgetError("value or uncertainty is not a finite number",
                                      location=doc.locate(path), subject=subject))
        out.quantities[q.name] = q
    for i, (a, b, r) in enumerate(derived.correlations):
        out.correlations[(a, b) if a < b else (b, a)] = r
        out.origins[(a, b) if a < b else (b, a)] = (derived.origins[i] if i < len(derived.origins)
                                                    else f"input model of '{name}'")
    if derived.details:
        out.details[name] = derived.details
    if derived.expression:
        out.lines.append((name, derived.expression, doc.locate(path, key=True)))
        out.working[name] = (model.key, derived.working)
    out.warnings += tuple(f"input '{name}': {w}" for w in derived.warnings)


def _build_limits(raw: Any, raw_inputs: Any, doc: Document, errors: list[BudgetError]) -> Any:
    """The budget's detection limits (ucalc.qc.limits), or None; problems are added to ``errors``."""
    if raw is None:
        return None
    from ..qc.limits import LimitsSpec, build

    try:
        spec = LimitsSpec.model_validate(raw)
    except ValidationError as exc:
        errors.extend(validation_errors(exc, LimitsSpec, doc, ("limits",), "limits"))
        return None
    fit = None
    if spec.calibration is not None:
        from ..inputs import calibration

        block = raw_inputs.get(spec.calibration) if isinstance(raw_inputs, dict) else None
        if not isinstance(block, dict) or "calibration" not in block:
            errors.append(BudgetError(f"'{spec.calibration}' is not a calibration input of this budget",
                                      location=doc.locate(("limits", "calibration")), subject="limits"))
            return None
        try:
            cal = calibration.Spec.model_validate(block).calibration
        except ValidationError:
            return None  # reported with the input
        if cal.weighting != "none" or cal.through_origin or cal.method != "external" or cal.function != "linear":
            errors.append(BudgetError("limits from a calibration line need an unweighted external straight line "
                                      "with an intercept (ISO 11843-2 5.3)",
                                      location=doc.locate(("limits", "calibration")), subject="limits"))
            return None
        try:
            fit = calibration.fit(cal)
        except (ValueError, ArithmeticError):
            return None  # reported with the input
    try:
        return build(spec, fit)
    except (ValueError, ArithmeticError) as exc:
        errors.append(BudgetError(str(exc), location=doc.locate(("limits",), key=True), subject="limits"))
        return None


def _model_positions(doc: Document, text: str) -> list[tuple[int, int]]:
    """File (line, column) where each line of the model text starts ((0, 0) for data without a file)."""
    if not doc.text:
        return [(0, 0)] * len(text.split("\n"))
    loc = doc.locate(("model",))
    source = doc.text.splitlines()
    lines = text.split("\n")
    first = source[loc.line - 1][loc.column - 1:loc.column] if 0 < loc.line <= len(source) else ""
    positions = []
    if first in ("|", ">"):
        for i, _ in enumerate(lines):
            number = loc.line + 1 + i
            raw = source[number - 1] if number <= len(source) else ""
            positions.append((number, len(raw) - len(raw.lstrip(" ")) + 1))
    else:
        quoted = 1 if first in ("'", '"') else 0
        positions = [(loc.line + i, (loc.column + quoted) if i == 0 else 1) for i in range(len(lines))]
    return positions


def _build_model(
    text: str, measurand: MeasurandSpec, quantities: dict[str, Quantity], failed: set[str], doc: Document,
    errors: list[BudgetError], input_lines: list[tuple[str, str, Location]] | None = None,
) -> Model | None:
    """Parse, check and compile the model lines; names of ``failed`` inputs are not reported again."""
    positions = _model_positions(doc, text)
    known_units: dict[str, Any] = {}
    scales: dict[str, str | None] = {}  # temperature scale of each name (°C and K values are not comparable)
    for name, q in quantities.items():
        try:
            known_units[name] = units.parse_unit(q.unit)
            scales[name] = units.temperature_scale(known_units[name])
        except ExpressionError:
            pass
    lines: list[ModelLine] = []
    defined_later = set()
    parsed: list[tuple[str, str, Location, int]] = []
    for name, body, where in input_lines or []:  # lines defined by input models come first
        parsed.append((name, body, where, where.column))
        defined_later.add(name)
    user_lines = len(parsed)
    written = sum(1 for raw in text.split("\n") if raw.split("#", 1)[0].strip())
    if written > expr.MAX_MODEL_LINES:
        errors.append(BudgetError(f"the model has {written:,} lines; the limit is {expr.MAX_MODEL_LINES:,}",
                                  location=doc.locate(("model",)), subject="model"))
        return None
    for index, raw in enumerate(text.split("\n")):
        body = raw.split("#", 1)[0]
        if not body.strip():
            continue
        line_no, col0 = positions[index] if index < len(positions) else (0, 0)
        m = _LINE.match(body)
        where = Location(doc.file, line_no, col0)
        if not m:
            errors.append(BudgetError("must read 'name = expression'", location=where,
                                      subject=f"model line {index + 1}"))
            continue
        name = m.group(2)
        expr_col = col0 + len(body) - len(m.group(3))
        parsed.append((name, m.group(3), where, expr_col))
        defined_later.add(name)
    if len(parsed) == user_lines:
        if not any(e.subject.startswith("model") for e in errors):
            errors.append(BudgetError("the model has no line 'name = expression'",
                                      location=doc.locate(("model",)), subject="model"))
        return None
    ok = True
    seen_lines: set[str] = set()
    for index, (name, body, where, expr_col) in enumerate(parsed):
        subject = f"model line '{name}'" if index >= user_lines else f"input '{name}'"
        if name in quantities or name in seen_lines:
            errors.append(BudgetError(f"'{name}' is defined twice (as an input or an earlier model line)",
                                      location=where, subject=subject))
            ok = False
            continue
        try:
            tree = expr.parse(body)
        except ExpressionError as exc:
            errors.append(BudgetError(exc.rule, subject=subject,
                                      location=Location(doc.file, where.line, expr_col + max(exc.column, 1) - 1)))
            ok = False
            seen_lines.add(name)
            continue
        bad = False
        for ref, col in expr.names(tree):
            if ref in known_units:
                continue
            if ref in failed or ref.split(".")[0] in failed:
                bad = True
                continue
            at = Location(doc.file, where.line, expr_col + col - 1)
            if ref in defined_later:
                rule = f"'{ref}' is used before the line that defines it (or defines itself)"
            else:
                pool = list(quantities) + list(seen_lines)
                close = difflib.get_close_matches(ref, pool, n=1)
                rule = f"unknown name '{ref}'" + (f"; did you mean '{close[0]}'?" if close else "")
            errors.append(BudgetError(rule, location=at, subject=subject))
            bad = True
        seen_lines.add(name)
        if bad:
            failed.add(name)
            ok = False
            continue
        try:
            scales[name] = units.check_temperature_scales(tree, scales)
            tree, unit = units.normalise(tree, known_units)
        except ExpressionError as exc:
            col = expr_col + max(exc.column, 1) - 1
            errors.append(BudgetError(f"unit mismatch: {exc.rule}" if "must" not in exc.rule else exc.rule,
                                      location=Location(doc.file, where.line, col), subject=subject))
            ok = False
            continue
        known_units[name] = unit
        lines.append(ModelLine(name, body.strip(), tree, unit, where))
    if not ok or not lines:
        return None
    last = lines[-1]
    if last.name != measurand.symbol:
        errors.append(BudgetError(
            f"the last model line defines '{last.name}' but the measurand is '{measurand.symbol}'",
            location=last.location, subject=f"model line '{last.name}'"))
        return None
    try:
        target = units.parse_unit(measurand.unit)
    except ExpressionError as exc:
        errors.append(BudgetError(exc.rule, location=doc.locate(("measurand", "unit")), subject="measurand"))
        return None
    if not units.same_dimension(last.unit, target):
        errors.append(BudgetError(
            f"unit mismatch: the model gives '{units.pretty(last.unit) or 'dimensionless'}', which cannot be "
            f"expressed in the measurand's unit '{measurand.unit or 'dimensionless'}'",
            location=last.location, subject=f"model line '{last.name}'"))
        return None
    scale = units.factor(last.unit, target)
    definitions: dict[str, expr.Node] = {}
    memo: dict[int, expr.Node] = {}
    levels: dict[int, int] = {}
    for line in lines:
        definitions[line.name] = expr.substitute(line.tree, definitions, memo)
        if expr.depth(definitions[line.name], levels) > expr.MAX_MODEL_DEPTH:
            errors.append(BudgetError(f"the model nests more than {expr.MAX_MODEL_DEPTH} levels deep once its lines "
                                      "are written into each other; combine lines or simplify the model",
                                      location=line.location, subject=f"model line '{line.name}'"))
            return None
    used = {n for n, _ in expr.names(definitions[last.name])}
    inputs = tuple(n for n in quantities if n in used)
    return Model(tuple(lines), inputs, scale, definitions[last.name])


def _build_correlations(
    raw: list[Any], quantities: dict[str, Quantity], doc: Document, errors: list[BudgetError],
    failed: set[str] | frozenset[str] = frozenset(),
) -> dict[tuple[str, str], float]:
    """Stated correlations; an input that failed validation (already reported) is skipped, not called unknown."""
    import numpy as np

    out: dict[tuple[str, str], float] = {}
    for i, item in enumerate(raw):
        path: PathKey = ("correlations", i)
        subject = f"correlation {i + 1}"
        try:
            spec = CorrelationSpec.model_validate(item)
        except ValidationError:
            continue  # reported by the top-level validation
        a, b = spec.between
        if a in failed or b in failed:
            continue
        bad = [i for i, n in enumerate((a, b)) if n not in quantities]
        if bad:
            name = (a, b)[bad[0]]
            close = difflib.get_close_matches(name, list(quantities), n=1)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            errors.append(BudgetError(f"unknown input '{name}'{hint}",
                                      location=doc.locate((*path, "between", bad[0])), subject=subject))
            continue
        if a == b:
            errors.append(BudgetError(f"an input cannot be correlated with itself ('{a}')",
                                      location=doc.locate((*path, "between")), subject=subject))
            continue
        pair = (a, b) if a < b else (b, a)
        if pair in out and out[pair] != spec.r:
            errors.append(BudgetError(f"'{a}' and '{b}' are given two different coefficients",
                                      location=doc.locate(path), subject=subject))
            continue
        out[pair] = spec.r
    names = sorted({n for pair, r in out.items() if r != 0.0 for n in pair})
    if names:
        index = {n: i for i, n in enumerate(names)}
        matrix = np.eye(len(names))
        for (a, b), r in out.items():
            if a in index and b in index:
                matrix[index[a], index[b]] = matrix[index[b], index[a]] = r
        smallest = float(np.linalg.eigvalsh(matrix).min())
        if smallest < -1e-10:
            errors.append(BudgetError(
                f"the correlation matrix of {', '.join(names)} is not positive semi-definite "
                f"(smallest eigenvalue {smallest:.3g}); the coefficients contradict each other",
                location=doc.locate(("correlations",), key=True), subject="correlations"))
    return out


def _check_at_estimate(
    model: Model, quantities: dict[str, Quantity], doc: Document, errors: list[BudgetError]
) -> None:
    env: dict[str, Any] = {n: quantities[n].value for n in model.inputs}
    for line in model.lines:
        subject = f"model line '{line.name}'"
        try:
            value = expr.compile_tree(line.tree, expr.FLOAT_BACKEND)(env)
        except (ArithmeticError, ValueError) as exc:
            reason = "division by zero" if isinstance(exc, ZeroDivisionError) else (
                "overflow" if isinstance(exc, OverflowError) else "outside a function's domain")
            errors.append(BudgetError(f"the value is not finite at the estimates ({reason})",
                                      location=line.location, subject=subject))
            return
        if not math.isfinite(value):
            errors.append(BudgetError("the value is not finite at the estimates",
                                      location=line.location, subject=subject))
            return
        env[line.name] = value
    last = model.lines[-1]
    for name in model.inputs:
        try:
            c = model.evaluate_tree(model.derivative(name), env)
            finite = math.isfinite(c)
        except (ArithmeticError, ValueError):
            finite = False
        if not finite:
            errors.append(BudgetError(
                f"the sensitivity coefficient for '{name}' is not finite at the estimates",
                location=last.location, subject=f"model line '{last.name}'"))


def derive_input(doc: Document, name: str, raw: Any) -> tuple[dict[str, Quantity], dict[tuple[str, str], float],
                                                               str | None]:
    """One input built alone, as the budget builds it: its quantities, the correlations among them, and the model
    line it defines (None for a plain quantity). Raises BudgetErrors."""
    errors: list[BudgetError] = []
    out = _Inputs()
    _build_input(name, raw, doc, errors, out)
    if errors:
        raise BudgetErrors(errors)
    return out.quantities, out.correlations, (out.lines[0][1] if out.lines else None)


def _slips(quantities: dict[str, Quantity]) -> tuple[str, ...]:
    """Warnings for likely slips: a negative mass, volume, count or concentration produced by an input model, and a
    relative component above 0.5 (relative components are fractions)."""
    out: list[str] = []
    for name, q in quantities.items():
        if q.model not in ("", "direct", "components", "bias") and q.value < 0:  # a bias correction may be < 0
            try:
                kind = units.physical_kind(units.parse_unit(q.unit))
            except ExpressionError:
                kind = None
            if kind and q.model == "calibration":  # a blank-level reading is a result (docs/input-models.md)
                out.append(f"input '{name}': the calibration gives a negative {kind} ({q.value:.6g} {q.unit}) for a "
                           "reading below the intercept; a blank-level result, to be reported against the detection "
                           "and quantification limits")
            elif kind:
                out.append(f"input '{name}': the {q.model} model gives a negative {kind} ({q.value:.6g} {q.unit}); "
                           "check the data it was given")
        for c in q.components:
            if c.relative and q.value and c.distribution.scale / abs(q.value) > 0.5:
                out.append(f"input '{name}': relative component '{c.name}' is {c.distribution.scale / abs(q.value):g} "
                           "of the value; relative components are fractions (0.5 % is 0.005)")
    return tuple(out)
