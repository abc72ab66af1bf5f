"""Hostile and broken budgets shared by tests/test_hostile.py and benchmarks/hostile.py: name -> (bytes, expected
fragment of the one-line refusal)."""

from __future__ import annotations

BASE = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = %s'\n"
        "inputs:\n  x: {value: 2, components: [{name: a, standard: 0.1}]}\n")


def _chain(lines: int, body: str, value: str = "2") -> str:
    """A model of ``lines`` lines, each using the one before (``body`` with {p} for it), ending in y."""
    model = ["a1 = x"] + [f"a{i} = " + body.format(p=f"a{i - 1}") for i in range(2, lines + 1)] + [f"y = a{lines}"]
    return ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: |\n" + "".join(f"  {m}\n" for m in model)
            + f"inputs:\n  x: {{value: {value}, components: [{{name: a, standard: 0.001}}]}}\n")


def _bomb() -> str:
    lines = ["a0: &a0 [x, x, x, x, x, x, x, x, x]"]
    for i in range(1, 9):
        prev = f"*a{i - 1}"
        lines.append(f"a{i}: &a{i} [{', '.join([prev] * 9)}]")
    return "\n".join(lines) + "\nucalc: *a8\n"


CASES: dict[str, tuple[bytes, str]] = {
    "dunder name": ((BASE % "x.__class__").encode(), "names may not start with '_' or hold '__'"),
    "dunder call": ((BASE % "__import__(\"os\")").encode(), "call of '__import__' is not allowed"),
    "attribute of a call": ((BASE % "abs(x).real").encode(), "only 'name.field' references are allowed"),
    "call of open": ((BASE % "open(\"/etc/passwd\")").encode(), "call of 'open' is not allowed"),
    "lambda": ((BASE % "(lambda: 1)()").encode(), "not allowed"),
    "comprehension": ((BASE % "[x for x in (1, 2)]").encode(), "comprehension is not allowed"),
    "power tower": ((BASE % "10**10**10").encode(), "not finite at the estimates (overflow)"),
    "nested power of x": ((BASE % "x**x**x**x**x**x").encode(), "not finite at the estimates"),
    "parentheses 10^4 deep": ((BASE % ("(" * 10_000 + "x" + ")" * 10_000)).encode(), "characters long"),
    "parentheses 150 deep": ((BASE % ("(" * 150 + "x" + ")" * 150)).encode(), "nested deeper than"),
    "unary minus 10^4 deep": ((BASE % ("-" * 10_000 + "x")).encode(), "characters long"),
    "YAML alias bomb": (_bomb().encode(), "alias expansion"),
    "YAML flow nesting 10^4": (("a: " + "[" * 10_000 + "]" * 10_000 + "\n").encode(), "nested more than 64"),
    "YAML object tag": (b"ucalc: !!python/object/apply:os.system ['echo hi']\n", "is not allowed in a budget"),
    "YAML custom tag": (b"title: !shell rm\n", "YAML tag '!shell' is not allowed"),
    "50 MB file": (b"# " + b"x" * 50_000_000 + b"\n", "the limit is 5 MB"),
    "tab indentation": (b"ucalc: 1\ninputs:\n\tx: 1\n", "a tab is used for indentation"),
    "duplicate keys": (b"ucalc: 1\ntitle: a\ntitle: b\n", "found duplicate key \"title\""),
    "non-UTF-8 bytes": ((BASE % "x").replace("title: t", "title: caf\xe9").encode("latin-1"), "not valid UTF-8"),
    "NUL byte": (b"ucalc: 1\x00\n", "YAML:"),
    "boolean as a number": ((BASE % "x").replace("value: 2", "value: true").encode(), "must be a number"),
    "infinite number": ((BASE % "x").replace("value: 2", "value: .inf").encode(), "must be a finite number"),
    "not a number": ((BASE % "x").replace("value: 2", "value: .nan").encode(), "'.nan' is not a number"),
    "not a mapping": (b"- 1\n- 2\n", "a budget must be a YAML mapping"),
    "empty file": (b"", "a budget must be a YAML mapping"),
    # second round: each of these hung or crashed before it was refused
    "unit string with arithmetic": ((BASE % "x").replace("value: 2,", "value: 2, unit: '10**10**10*m',").encode(),
                                    "a number may appear only as an exponent"),
    "unit string exponent 99": ((BASE % "x").replace("value: 2,", "value: 2, unit: 'm**99',").encode(),
                                "exponents are limited to 12"),
    "40 chained squares": (_chain(40, "{p}*{p}").encode(), "not finite at the estimates"),
    "model 1000+ levels deep": (_chain(600, "({p} + x)*1").encode(), "nests more than 1000 levels"),
    "model of 2000 lines": (_chain(2000, "{p} + x").encode(), "the limit is 1,000"),
    "YAML list of 10^6 items": (("ucalc: 1\nx: [" + ", ".join(["1"] * 1_000_000) + "]\n").encode(),
                                "more than 2,500 values"),
    "YAML 3000 short items": (("ucalc: 1\nx: [" + ",".join(["1"] * 3000) + "]\n").encode(),
                              "more than 2,500 values"),
    "YAML 1300 keys": (("ucalc: 1\nx:\n" + "".join(f"  k{i}: {i}\n" for i in range(1300))).encode(),
                       "more than 2,500 values"),
}
