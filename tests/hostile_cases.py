"""Hostile and broken budgets shared by tests/test_hostile.py and benchmarks/hostile.py: name -> (bytes, expected
fragment of the one-line refusal)."""

from __future__ import annotations

BASE = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = %s'\n"
        "inputs:\n  x: {value: 2, components: [{name: a, standard: 0.1}]}\n")


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
}
