"""Reading a budget's YAML safely, keeping the line and column of every key and value.

ruamel.yaml's round-trip loader builds only plain mappings, sequences and scalars (no object-building tags), and
refuses duplicate keys. We turn its output into plain Python data and a table of locations, refuse tags, and
count nodes while parsing (and again while expanding aliases) so that a huge list or an alias bomb stops early.
Merge keys (``<<: *defaults``) are expanded; the merged keys are placed at the mapping that merges them.
"""

from __future__ import annotations

import io
import math
import re
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path
from typing import Any, NoReturn

from ..errors import BudgetError, Location

MAX_BYTES = 5_000_000
MAX_NODES = 25_000  # after alias expansion
MAX_PARSED_NODES = 2_500  # as written; counted while parsing (the parser needs 0.2-0.6 ms per node)
MAX_DEPTH = 64
_PLAIN_TAGS = {f"tag:yaml.org,2002:{t}" for t in ("str", "int", "float", "bool", "null", "map", "seq")}

PathKey = tuple[str | int, ...]


@dataclass
class Document:
    """Plain data of a YAML file plus where each piece stands in it."""

    file: str
    data: Any
    text: str
    keys: dict[PathKey, tuple[int, int]] = field(default_factory=dict)
    values: dict[PathKey, tuple[int, int]] = field(default_factory=dict)

    def locate(self, path: PathKey, *, key: bool = False) -> Location:
        """Location of the value (or key) at ``path``; falls back to the nearest enclosing place."""
        table = self.keys if key else self.values
        probe = tuple(path)
        while probe:
            for t in (table, self.keys, self.values):
                if probe in t:
                    line, col = t[probe]
                    return Location(self.file, line, col)
            probe = probe[:-1]
        return Location(self.file, 1, 1) if self.text else Location(self.file)  # no text: data given in memory


def read_text(path: str | Path, *, what: str = "budget") -> str:
    """Read a UTF-8 text file with clear errors for size, encoding and a byte-order mark."""
    p = Path(path)
    name = str(path)
    try:
        size = p.stat().st_size
    except OSError as exc:
        raise BudgetError(f"cannot read {what} file ({exc.strerror or exc})", location=Location(name)) from None
    if not p.is_file():
        raise BudgetError(f"{what} path is not a file", location=Location(name))
    if size > MAX_BYTES:
        raise BudgetError(
            f"{what} file is {size / 1e6:.1f} MB; the limit is {MAX_BYTES / 1e6:.0f} MB", location=Location(name)
        )
    raw = p.read_bytes()
    if raw.startswith(b"\xef\xbb\xbf"):
        raw = raw[3:]  # a UTF-8 byte-order mark carries no meaning; editors on some systems add it
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        _fail(f"file is not valid UTF-8 (byte 0x{raw[exc.start]:02x} at offset {exc.start})", name, line)


def _fail(rule: str, file: str, line: int = 0, col: int = 0) -> NoReturn:
    raise BudgetError(rule, location=Location(file, line, col))


def load_yaml(path: str | Path) -> Document:
    """Load a budget file into a :class:`Document`, or raise :class:`BudgetError` with a location."""
    text = read_text(path)
    return parse_yaml(text, str(path))


def parse_yaml(text: str, file: str) -> Document:
    from ruamel.yaml import YAML
    from ruamel.yaml.error import MarkedYAMLError, YAMLError

    _prescan(text, file)
    depth = deepest = 0
    for ch in re.sub(r"[^\[\]{}]+", "", text):  # flow nesting, counted before the parser recurses into it
        depth = depth + 1 if ch in "[{" else max(depth - 1, 0)
        deepest = max(deepest, depth)
    if deepest > MAX_DEPTH:
        _fail(f"YAML nested more than {MAX_DEPTH} levels deep", file)
    tab = re.search(r"^( *)\t", text, re.MULTILINE)
    if tab:
        _fail("a tab is used for indentation; YAML needs spaces", file, text.count("\n", 0, tab.start()) + 1,
              len(tab.group(1)) + 1)
    loader = YAML(typ="rt")  # round-trip loader: plain mappings and scalars only, never objects
    loader.Composer = _counting_composer()
    try:
        raw = loader.load(io.StringIO(text))
    except _TooManyNodes as exc:
        _fail(f"YAML document has more than {MAX_PARSED_NODES:,} values; a budget may hold at most that many",
              file, exc.line, exc.column)
    except MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        problem = (exc.problem or exc.context or "YAML error").strip()
        if "duplicate key" in problem:
            problem = problem.split(" with value")[0]
        where = (mark.line + 1, mark.column + 1) if mark else (0, 0)
        hint = syntax_hint(problem, text, where[0])
        _fail(f"YAML: {problem}" + (f"; {hint}" if hint else ""), file, *where)
    except YAMLError as exc:
        _fail(f"YAML: {str(exc).splitlines()[0] if str(exc) else type(exc).__name__}", file)
    except RecursionError:
        _fail("YAML nested too deeply", file)
    except ValueError as exc:  # an impossible date such as 2026-13-04, which YAML reads as a timestamp
        _fail(f"YAML: a value written as a date is not a calendar date ({exc}); write dates YYYY-MM-DD", file)
    doc = Document(file=file, data=None, text=text)
    counter = [0]
    doc.data = _plain(raw, (), doc, counter, 0)
    return doc


_NO_SPACE = re.compile(r"^\s*-?\s*([A-Za-z_][\w.]*):(?=[^\s:/])")


def syntax_hint(problem: str, text: str, line: int) -> str:
    """How to fix the common slips behind a YAML parser message: a tab after a colon, a missing space after a
    colon, an indentation that does not line up (the parser's own words name none of them)."""
    lines = text.splitlines()
    near = [lines[n - 1] for n in (line, line - 1) if 0 < n <= len(lines)]
    if "'\t'" in problem or "\\t" in problem:
        if any(re.search(r":\t", t) for t in near):
            return "a tab follows a colon; put a space after ':' instead"
        return "a tab is not allowed here; use spaces"
    for t in near:
        m = _NO_SPACE.match(t)
        if m:
            return f"a space is missing after the colon of '{m.group(1)}:'; write '{m.group(1)}: ' and then the value"
    if any(words in problem for words in ("block end", "expected <block", "mapping values are not allowed",
                                          "could not find expected ':'", "did not find expected key")):
        return ("check the indentation: keys of one mapping start in the same column, and a nested block is "
                "indented further than its key (spaces only)")
    return ""


_ITEM = re.compile(r",|^[ \t]*-(?:[ \t]|$)|:(?:[ \t]|$)", re.MULTILINE)


def _prescan(text: str, file: str) -> None:
    """Refuse, before parsing, text with more list items and keys than a budget may hold (counted by their
    commas, dashes and colons: a fast upper estimate of what the parser would build)."""
    for count, match in enumerate(_ITEM.finditer(text), 1):
        if count > MAX_PARSED_NODES:
            line = text.count("\n", 0, match.start()) + 1
            _fail(f"YAML document has more than {MAX_PARSED_NODES:,} values; a budget may hold at most that many",
                  file, line, match.start() - text.rfind("\n", 0, match.start()))


class _TooManyNodes(Exception):
    def __init__(self, line: int, column: int) -> None:
        self.line, self.column = line, column


@lru_cache(maxsize=1)
def _counting_composer() -> Any:
    from ruamel.yaml.composer import Composer

    class Counting(Composer):
        """ruamel's composer, stopping after MAX_PARSED_NODES nodes (aliases count once)."""

        count = 0

        def compose_node(self, parent: Any, index: Any) -> Any:
            self.count += 1
            if self.count > MAX_PARSED_NODES:
                mark = self.parser.peek_event().start_mark
                raise _TooManyNodes(mark.line + 1, mark.column + 1)
            return super().compose_node(parent, index)

    return Counting


def _plain(node: Any, path: PathKey, doc: Document, counter: list[int], depth: int) -> Any:
    from ruamel.yaml.comments import CommentedMap, CommentedSeq, TaggedScalar

    counter[0] += 1
    if counter[0] > MAX_NODES or depth > MAX_DEPTH:
        loc = doc.locate(path)
        why = "nested too deeply" if depth > MAX_DEPTH else f"has more than {MAX_NODES} nodes (alias expansion?)"
        _fail(f"YAML document {why}", doc.file, loc.line, loc.column)
    tag = getattr(node, "tag", None)
    tag_value = getattr(tag, "value", None) if tag is not None else None
    if (tag_value and tag_value not in _PLAIN_TAGS) or isinstance(node, bytes | set):
        loc = doc.locate(path)
        shown = str(tag_value or "!!binary").replace("tag:yaml.org,2002:", "!!")
        _fail(f"YAML tag '{shown}' is not allowed in a budget", doc.file, loc.line, loc.column)
    if isinstance(node, TaggedScalar):
        return str(node.value)
    if isinstance(node, CommentedMap):
        out: dict[str, Any] = {}
        for key in node:
            try:
                kline, kcol = node.lc.key(key) or (-1, -1)
                vline, vcol = node.lc.value(key) or (kline, kcol)
            except KeyError:  # a key brought in by a merge key ('<<: *x'): placed at this mapping
                kline, kcol = vline, vcol = node.lc.line, node.lc.col
            if not isinstance(key, str | int | float) or isinstance(key, bool):
                _fail(f"mapping key {key!r} is not text", doc.file, kline + 1, kcol + 1)
            skey = str(key)
            child = (*path, skey)
            doc.keys[child] = (kline + 1, kcol + 1)
            doc.values[child] = (vline + 1, vcol + 1)
            out[skey] = _plain(node[key], child, doc, counter, depth + 1)
        return out
    if isinstance(node, CommentedSeq):
        items = []
        for i, item in enumerate(node):
            line, col = node.lc.item(i) or (-1, -1)
            child = (*path, i)
            doc.values[child] = (line + 1, col + 1)
            items.append(_plain(item, child, doc, counter, depth + 1))
        return items
    if isinstance(node, bool) or node is None:
        return node
    if isinstance(node, int):
        return int(node)
    if isinstance(node, float):
        value = float(node)
        if math.isnan(value):  # infinities pass: 'dof: .inf' is meaningful, elsewhere the schema refuses them
            loc = doc.locate(path)
            _fail("'.nan' is not a number a budget can use", doc.file, loc.line, loc.column)
        return value
    if isinstance(node, str):
        return str(node)
    # dates and other scalar types carry no meaning in a budget; keep them as text for the schema to judge
    return str(node)
