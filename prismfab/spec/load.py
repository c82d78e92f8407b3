"""Read a spec file: safe YAML -> checked plain values -> frozen ``Spec``.

This is the only module that touches YAML. The parser's events (libyaml's C parser when it is
installed) are composed into a YAML node tree without recursion and without constructing
Python objects, so every key and value keeps its line and column. The tree is then walked
against the field table ``prismfab.spec.fields.SPEC``: unknown keys, wrong types, out-of-range
numbers and unknown words are refused here, each as a ``SpecError`` that names the dotted field
path, the line and column, and what would fix it. Cross-field rules and material look-ups
follow in ``prismfab.spec.validate``.

Guards against hostile or broken files: a size limit checked before parsing; caps on aliases,
values and nesting depth (no "billion laughs", no stack overflow); no duplicate keys, no merge
keys, no custom tags, no NaN or infinity, no booleans where numbers belong.
"""
from __future__ import annotations

import difflib
import math
import re
from pathlib import Path
from typing import Any

import yaml

from prismfab.errors import SpecError
from prismfab.spec.fields import (
    SPEC,
    Choice,
    Field,
    Flag,
    Kind,
    ListOf,
    Number,
    Section,
    Text,
    Variant,
)
from prismfab.spec.types import Spec

__all__ = [
    "MAX_ALIASES",
    "MAX_BYTES",
    "MAX_DEPTH",
    "MAX_NODES",
    "load_spec",
    "load_spec_text",
    "templates_dir",
]

MAX_BYTES = 1 << 20
"""Largest spec file accepted (1 MiB); checked before the file is parsed."""
MAX_ALIASES = 16
"""Most YAML aliases (``*name``) a spec may use."""
MAX_NODES = 20_000
"""Most values a spec may hold, counted while composing and again while walking (aliases)."""
MAX_DEPTH = 32
"""Deepest nesting of lists and mappings accepted (a spec needs five)."""

_TAG = "tag:yaml.org,2002:"
_NUMBER_TEXT = re.compile(r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?")


_PARSER: Any = getattr(yaml, "CSafeLoader", yaml.SafeLoader)  # libyaml when installed
_RESOLVER = yaml.resolver.Resolver()


class _Composer:
    """Builds the YAML node tree from parser events, without recursion.

    PyYAML's own composer recurses (deep nesting overflows the stack) and expands nothing
    but shares alias nodes; this one also caps aliases and depth, and lets the fast C parser
    do the scanning when libyaml is installed.
    """

    def __init__(self, source: str | None) -> None:
        self.source = source
        self.anchors: dict[str, yaml.Node] = {}
        self.stack: list[list[Any]] = []  # [collection node, pending mapping key or None]
        self.root: yaml.Node | None = None
        self.documents = 0
        self.aliases = 0
        self.nodes = 0

    def fail(self, problem: str, mark: yaml.Mark, fix: str) -> SpecError:
        return SpecError("", problem, line=mark.line + 1, column=mark.column + 1, fix=fix,
                         source=self.source)

    def compose(self, text: str) -> yaml.Node | None:
        for event in yaml.parse(text, Loader=_PARSER):
            self.event(event)
        return self.root

    def event(self, event: yaml.Event) -> None:
        if isinstance(event, yaml.DocumentStartEvent):
            self.documents += 1
            if self.documents > 1:
                raise self.fail("is not valid YAML (it holds more than one document)",
                                event.start_mark, "keep one document: delete the '---' line "
                                "and what follows it")
        elif isinstance(event, yaml.AliasEvent):
            self.alias(event)
        elif isinstance(event, yaml.ScalarEvent):
            tag = event.tag if event.tag not in (None, "!") else _RESOLVER.resolve(
                yaml.ScalarNode, event.value, event.implicit)
            self.add(yaml.ScalarNode(tag, event.value, event.start_mark, event.end_mark,
                                     style=event.style or None), event)  # C: '' = plain
        elif isinstance(event, (yaml.SequenceStartEvent, yaml.MappingStartEvent)):
            self.start(event)
        elif isinstance(event, (yaml.SequenceEndEvent, yaml.MappingEndEvent)):
            self.stack.pop()

    def start(self, event: yaml.CollectionStartEvent) -> None:
        if len(self.stack) >= MAX_DEPTH:
            raise self.fail(f"is nested more than {MAX_DEPTH} levels deep", event.start_mark,
                            "a spec has at most four levels of keys")
        kind = yaml.SequenceNode if isinstance(event, yaml.SequenceStartEvent) else \
            yaml.MappingNode
        tag = event.tag if event.tag not in (None, "!") else _RESOLVER.resolve(
            kind, None, event.implicit)
        node = kind(tag, [], event.start_mark, None, flow_style=event.flow_style)
        self.add(node, event)
        self.stack.append([node, None])

    def alias(self, event: yaml.AliasEvent) -> None:
        self.aliases += 1
        if self.aliases > MAX_ALIASES:
            raise self.fail(f"uses more than {MAX_ALIASES} YAML aliases", event.start_mark,
                            "write the values out instead of repeating anchors")
        if event.anchor not in self.anchors:
            raise self.fail(f"uses the alias '*{event.anchor}' before its anchor",
                            event.start_mark, f"define '&{event.anchor}' first, or write "
                            "the value out")
        self.add(self.anchors[event.anchor], None)

    def add(self, node: yaml.Node, event: yaml.NodeEvent | None) -> None:
        self.nodes += 1
        if self.nodes > MAX_NODES:
            raise self.fail(f"holds more than {MAX_NODES} values", node.start_mark,
                            "a spec is short; check that the right file was given")
        if event is not None and event.anchor is not None:
            self.anchors[event.anchor] = node
        if not self.stack:
            self.root = node
            return
        top = self.stack[-1]
        parent = top[0]
        if isinstance(parent, yaml.SequenceNode):
            parent.value.append(node)
        elif top[1] is None:
            top[1] = node
        else:
            parent.value.append((top[1], node))
            top[1] = None


def templates_dir() -> Path:
    """The folder of templates (``templates/`` at the repository root or in the package)."""
    here = Path(__file__).resolve().parent.parent
    for candidate in (here / "templates", here.parent / "templates"):
        if (candidate / "specs").is_dir():
            return candidate
    return here.parent / "templates"


def load_spec(path: str | Path) -> Spec:
    """Load and validate a spec file.

    Args:
        path: the YAML spec file.

    Returns:
        The validated, frozen spec; ``materials_file`` is resolved relative to the file.

    Raises:
        SpecError: the file is missing, too large, not YAML, or a field is wrong (the error
            names the field path, line and column, and the fix).
        MaterialError: a material is unknown or a beam wavelength lies outside its range.
    """
    p = Path(path)
    source = str(path)
    try:
        size = p.stat().st_size
        if not p.is_file():
            raise SpecError("", f"cannot be read: '{source}' is not a file",
                            fix="give the path of a YAML spec file")
        if size > MAX_BYTES:
            raise SpecError("", f"is too large ({size} bytes; the limit is {MAX_BYTES} bytes)",
                            fix="a spec is a short YAML file; check that the right file was given",
                            source=source)
        raw = p.read_bytes()
    except FileNotFoundError:
        raise SpecError("", f"cannot be read: file '{source}' does not exist",
                        fix="check the path, or write a starter spec with 'prismfab init FAMILY'"
                        ) from None
    except OSError as err:
        raise SpecError("", f"cannot be read: {err.strerror or err}",
                        fix="check the path and its permissions", source=source) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        raise SpecError("", f"is not UTF-8 text (bad byte at offset {err.start})",
                        fix="save the file as UTF-8", source=source) from None
    return load_spec_text(text, source=source, base_dir=p.resolve().parent)


def load_spec_text(text: str, source: str = "", *, base_dir: str | Path | None = None) -> Spec:
    """Validate spec text.

    Args:
        text: YAML text of a spec.
        source: file name used in error messages ("" for in-memory text).
        base_dir: folder ``materials_file`` is relative to (default: the folder of ``source``,
            else the current folder).

    Returns:
        The validated, frozen spec.

    Raises:
        SpecError: see ``load_spec``.
    """
    from prismfab.spec.validate import build_spec

    if len(text) > MAX_BYTES or len(text.encode("utf-8", "surrogatepass")) > MAX_BYTES:
        raise SpecError("", f"is too large (more than {MAX_BYTES} bytes)",
                        fix="a spec is a short YAML file; check that the right file was given",
                        source=source or None)
    root = _compose(text, source)
    walker = _Walker(source)
    data = walker.top(root)
    if base_dir is None:
        base_dir = Path(source).resolve().parent if source else Path.cwd()
    return build_spec(data, lines=tuple(walker.lines), source=source, base_dir=Path(base_dir))


def _compose(text: str, source: str) -> yaml.Node | None:
    src = source or None
    try:
        return _Composer(src).compose(text)
    except yaml.MarkedYAMLError as err:
        raise _syntax_error(err, text, src) from None
    except yaml.reader.ReaderError as err:
        # the C reader counts bytes of the UTF-8 text, the Python reader characters
        data: str | bytes = text.encode("utf-8") if _PARSER is not yaml.SafeLoader else text
        head = data[:err.position]
        line = head.count("\n" if isinstance(head, str) else b"\n") + 1
        raise SpecError("", f"holds a character YAML does not allow ({err.reason})", line=line,
                        fix="delete control characters; a spec is plain UTF-8 text",
                        source=src) from None
    except yaml.YAMLError as err:
        raise SpecError("", f"is not valid YAML text ({' '.join(str(err).split())})",
                        fix="save the file as plain UTF-8 text", source=src) from None


def _syntax_error(err: yaml.MarkedYAMLError, text: str, source: str | None) -> SpecError:
    mark = err.problem_mark or err.context_mark
    lines = text.splitlines()
    line_text = lines[mark.line] if mark and mark.line < len(lines) else ""
    problem = " ".join(str(err.problem or "syntax error").split())
    context = " ".join(str(err.context or "").split())
    if context.startswith("while") and err.context_mark is not None:
        problem += f", {context} that starts on line {err.context_mark.line + 1}"
    elif context:
        problem = f"{context}, {problem}"
    if "nesting depth" in problem:
        return SpecError("", "is nested too deeply (more levels than YAML allows)",
                         line=mark.line + 1 if mark else None,
                         fix="a spec has at most four levels of keys", source=source)
    if "\t" in line_text or "'\\t'" in problem:
        fix = "indent with spaces, not tabs"
    elif "another document" in problem:
        fix = "keep one document: delete the '---' line and what follows it"
    else:
        fix = "check the indentation, the colons, the brackets and the quoting here"
    return SpecError("", f"is not valid YAML ({problem})",
                     line=mark.line + 1 if mark else None,
                     column=mark.column + 1 if mark else None, fix=fix, source=source)


def _pos(node: yaml.Node) -> tuple[int, int]:
    return node.start_mark.line + 1, node.start_mark.column + 1


def _suggest(word: str, choices: tuple[str, ...] | list[str]) -> str:
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
    return f"did you mean '{close[0]}'? " if close else ""


def _show(node: yaml.Node) -> str:
    if isinstance(node, yaml.ScalarNode):
        value = node.value if len(node.value) <= 40 else node.value[:37] + "..."
        return f"'{value}'"
    return "a list" if isinstance(node, yaml.SequenceNode) else "a mapping"


class _Walker:
    """Walks the node tree against the field table, recording (path, line, column)."""

    def __init__(self, source: str) -> None:
        self.source = source or None
        self.lines: list[tuple[str, int, int]] = []
        self.count = 0
        self.scalar = yaml.SafeLoader("")

    def fail(self, path: str, problem: str, where: yaml.Node | tuple[int, int] | None,
             fix: str | None = None) -> SpecError:
        line, col = (where if isinstance(where, tuple) else _pos(where)) if where else (None, None)
        return SpecError(path, problem, line=line, column=col, fix=fix, source=self.source)

    def top(self, root: yaml.Node | None) -> dict[str, Any]:
        if root is None or (isinstance(root, yaml.ScalarNode) and root.tag == _TAG + "null"):
            raise self.fail("", "is empty", None,
                            "write a spec, or start from 'prismfab init anamorphic-pair'")
        if not isinstance(root, yaml.MappingNode):
            raise self.fail("", f"must be a mapping of sections (format, project, beam, design, "
                            f"...), not {_show(root)}", root,
                            "start from 'prismfab init anamorphic-pair'")
        return self.section(root, SPEC, "")

    # ------------------------------------------------------------------ mappings

    def _pairs(self, node: yaml.MappingNode, path: str) -> list[tuple[str, yaml.Node, yaml.Node]]:
        seen: dict[str, int] = {}
        out = []
        for key_node, value_node in node.value:
            if key_node.tag == _TAG + "merge":
                raise self.fail(path, "uses a YAML merge key '<<'", key_node,
                                "write the keys out in full")
            if not (isinstance(key_node, yaml.ScalarNode) and key_node.tag == _TAG + "str"):
                raise self.fail(path, f"has a key {_show(key_node)} that is not a word", key_node,
                                "keys are names such as 'wavelength_nm'")
            key = key_node.value
            if key in seen:
                raise self.fail(_join(path, key), f"appears twice (first on line {seen[key]})",
                                key_node, "delete one of the two entries")
            seen[key] = key_node.start_mark.line + 1
            out.append((key, key_node, value_node))
        return out

    def _mapping(self, node: yaml.Node, path: str, what: str) -> yaml.MappingNode:
        self._tick(node, path)
        if not isinstance(node, yaml.MappingNode):
            raise self.fail(path, f"must be a mapping of keys ({what}), not {_show(node)}", node,
                            "write it as indented 'key: value' lines")
        return node

    def section(self, node: yaml.Node, section: Section, path: str,
                extra: tuple[str, ...] = (), others: dict[str, str] | None = None
                ) -> dict[str, Any]:
        node = self._mapping(node, path, section.doc or "a section")
        names = tuple(f.name for f in section.fields)
        out: dict[str, Any] = {}
        for key, key_node, value_node in self._pairs(node, path):
            if key in extra:
                continue
            field = section.field(key)
            sub = _join(path, key)
            if field is None:
                raise self._unknown(key, key_node, sub, names + extra, others or {})
            self._record(sub, key_node, value_node)
            out[key] = self.value(value_node, field, sub)
        for f in section.fields:
            if f.required and f.name not in out:
                where = f" under '{path}'" if path else " at the top level"
                example = f": {f.example}" if f.example else ""
                raise self.fail(_join(path, f.name), f"is missing ({f.doc})",
                                self._key_pos(path) or node, f"add '{f.name}{example}'{where}")
        return out

    def _unknown(self, key: str, key_node: yaml.Node, path: str, names: tuple[str, ...],
                 others: dict[str, str]) -> SpecError:
        parent = path.rpartition(".")[0]
        if key in others:
            return self.fail(path, f"is not a field of this family (it belongs to {others[key]})",
                             key_node, f"remove it; fields here: {', '.join(names)}")
        place = f"under '{parent}'" if parent else "at the top level"
        return self.fail(path, "is not a known key", key_node,
                         f"{_suggest(key, names)}keys allowed {place}: {', '.join(names)}")

    def _key_pos(self, path: str) -> tuple[int, int] | None:
        """Line and column where the key of ``path`` was written (None at the top level)."""
        return next(((ln, col) for p, ln, col in reversed(self.lines) if p == path), None)

    def _record(self, path: str, key_node: yaml.Node, value_node: yaml.Node) -> None:
        same_line = value_node.start_mark.line == key_node.start_mark.line
        line, col = _pos(value_node if same_line and isinstance(value_node, yaml.ScalarNode)
                         else key_node)
        self.lines.append((path, line, col))

    def _tick(self, node: yaml.Node, path: str) -> None:
        self.count += 1
        if self.count > MAX_NODES:
            raise self.fail(path, f"holds more than {MAX_NODES} values", node,
                            "a spec is short; remove repeated anchors and long lists")

    def variant(self, node: yaml.Node, variant: Variant, path: str) -> dict[str, Any]:
        node = self._mapping(node, path, variant.doc)
        pairs = {k: (kn, vn) for k, kn, vn in self._pairs(node, path)}
        names = tuple(name for name, _ in variant.cases)
        key_path = _join(path, variant.key)
        if variant.key not in pairs:
            raise self.fail(key_path, f"is missing ({variant.doc})", self._key_pos(path) or node,
                            f"add '{variant.key}: ' with one of: {', '.join(names)}")
        key_node, value_node = pairs[variant.key]
        self._record(key_path, key_node, value_node)
        case = self.choice(value_node, Choice(names), key_path)
        section = dict(variant.cases)[case]
        others: dict[str, str] = {}
        for name, sec in variant.cases:
            if name != case:
                for f in sec.fields:
                    if section.field(f.name) is None:
                        others[f.name] = (others[f.name] + ", " if f.name in others else "") + name
        out = self.section(node, section, path, extra=(variant.key,), others=others)
        out[variant.key] = case
        return out

    # ------------------------------------------------------------------ values

    def value(self, node: yaml.Node, field: Field, path: str) -> Any:
        if isinstance(node, yaml.ScalarNode) and node.tag == _TAG + "null":
            if field.nullable:
                return None
            raise self.fail(path, "is empty", node,
                            f"give a value ({field.doc}) or delete the line")
        return self.kind(node, field.kind, path)

    def kind(self, node: yaml.Node, kind: Kind, path: str) -> Any:
        if isinstance(kind, Section):
            return self.section(node, kind, path)
        if isinstance(kind, Variant):
            return self.variant(node, kind, path)
        self._tick(node, path)
        if isinstance(kind, ListOf):
            return self.list_of(node, kind, path)
        if not isinstance(node, yaml.ScalarNode):
            raise self.fail(path, f"must be a single value, not {_show(node)}", node,
                            _scalar_fix(kind))
        if isinstance(kind, Number):
            return self.number(node, kind, path)
        if isinstance(kind, Flag):
            if node.tag != _TAG + "bool":
                raise self.fail(path, f"must be true or false, not {_show(node)}", node,
                                "write true or false")
            return bool(self.scalar.construct_yaml_bool(node))
        if isinstance(kind, Choice):
            return self.choice(node, kind, path)
        return self.text(node, kind, path)

    def list_of(self, node: yaml.Node, kind: ListOf, path: str) -> tuple[Any, ...]:
        if not isinstance(node, yaml.SequenceNode):
            raise self.fail(path, f"must be a list, not {_show(node)}", node,
                            f"write it as a list in brackets, {_count_words(kind)}")
        n = len(node.value)
        if n < kind.min_items or (kind.max_items is not None and n > kind.max_items):
            raise self.fail(path, f"has {n} item{'s' if n != 1 else ''}", node,
                            f"give {_count_words(kind)}")
        out = []
        for i, item in enumerate(node.value):
            sub = f"{path}.{i}"
            self.lines.append((sub, *_pos(item)))
            if isinstance(item, yaml.ScalarNode) and item.tag == _TAG + "null":
                raise self.fail(sub, "is empty", item, "give a value or remove the item")
            out.append(self.kind(item, kind.item, sub))
        return tuple(out)

    def number(self, node: yaml.ScalarNode, kind: Number, path: str) -> float | int:
        what = "a whole number" if kind.integer else "a number"
        if node.tag == _TAG + "bool":
            raise self.fail(path, f"must be {what}, not the truth value {_show(node)}", node,
                            f"write {what}")
        if node.tag in (_TAG + "int", _TAG + "float"):
            raw = self.scalar.construct_object(node)
        elif node.tag == _TAG + "str" and node.style is None and _NUMBER_TEXT.fullmatch(
                node.value.strip()):
            raw = float(node.value)  # plain '1e3': YAML 1.1 leaves it text, engineers mean 1000
        else:
            quoted = node.tag == _TAG + "str" and node.style in ("'", '"')
            raise self.fail(path, f"must be {what}, not {_show(node)}", node,
                            "remove the quotes" if quoted and _NUMBER_TEXT.fullmatch(
                                node.value.strip()) else f"write {what}")
        try:
            value = float(raw)
        except OverflowError:
            value = math.inf
        if not math.isfinite(value):
            raise self.fail(path, f"must be a finite number, not {_show(node)}", node,
                            f"write {what}; NaN and infinity are not allowed")
        if kind.integer:
            if not value.is_integer():
                raise self.fail(path, f"must be a whole number, not {_show(node)}", node,
                                f"write a whole number such as {max(1, round(value))}")
            value = int(value)
        _check_bounds(self, path, node, value, kind)
        return value

    def choice(self, node: yaml.Node, kind: Choice, path: str) -> Any:
        if not isinstance(node, yaml.ScalarNode) or node.tag == _TAG + "null":
            raise self.fail(path, f"must be one of: {', '.join(kind.values)}", node,
                            "write one of these words")
        word = node.value.strip().lower()
        if word not in kind.values:
            raise self.fail(path, f"has unknown value {_show(node)}", node,
                            f"{_suggest(word, kind.values)}use one of: {', '.join(kind.values)}")
        return kind.enum(word) if kind.enum else word

    def text(self, node: yaml.ScalarNode, kind: Text, path: str) -> str:
        if node.tag not in (_TAG + t for t in ("str", "int", "float", "timestamp")):
            raise self.fail(path, f"must be text, not {_show(node)}", node,
                            "put the text in quotes")
        value = node.value
        if kind.nonempty and not value.strip():
            raise self.fail(path, "must not be empty", node, "give a value")
        if len(value) > kind.max_length:
            raise self.fail(path, f"is too long ({len(value)} characters)", node,
                            f"use at most {kind.max_length} characters")
        if kind.pattern and not re.fullmatch(kind.pattern, value):
            raise self.fail(path, f"has the value {_show(node)}, which is not allowed", node,
                            f"use {kind.pattern_rule}")
        return value


def _check_bounds(walker: _Walker, path: str, node: yaml.Node, value: float, kind: Number
                  ) -> None:
    rules = (
        (kind.minimum, lambda b: value < b, "at least"),
        (kind.exclusive_minimum, lambda b: value <= b, "greater than"),
        (kind.maximum, lambda b: value > b, "at most"),
        (kind.exclusive_maximum, lambda b: value >= b, "less than"),
    )
    if kind.minimum is not None and kind.minimum == kind.maximum and value != kind.minimum:
        raise walker.fail(path, f"must be {_fmt(kind.minimum)}, not {_show(node)}", node,
                          f"write {_fmt(kind.minimum)}: the only value this prismfab reads")
    for bound, broken, words in rules:
        if bound is not None and broken(bound):
            hint = _unit_hint(path, value)
            raise walker.fail(path, f"must be {words} {_fmt(bound)}, not {_show(node)}", node,
                              f"use a value {_range_words(kind)}{hint}")


def _unit_hint(path: str, value: float) -> str:
    if path.endswith("_nm") and 0 < value < 100:
        return " (wavelengths are in nanometres: 0.78 um is 780 nm)"
    return ""


def _range_words(kind: Number) -> str:
    lo = (f">= {_fmt(kind.minimum)}" if kind.minimum is not None else
          f"> {_fmt(kind.exclusive_minimum)}" if kind.exclusive_minimum is not None else "")
    hi = (f"<= {_fmt(kind.maximum)}" if kind.maximum is not None else
          f"< {_fmt(kind.exclusive_maximum)}" if kind.exclusive_maximum is not None else "")
    return " and ".join(w for w in (lo, hi) if w)


def _fmt(value: float | None) -> str:
    return f"{value:g}"


def _count_words(kind: ListOf) -> str:
    if kind.max_items == kind.min_items:
        letters = ", ".join("abc"[:kind.min_items])
        return f"exactly {kind.min_items} values like [{letters}]"
    if kind.max_items is None:
        return f"at least {kind.min_items} values"
    return f"{kind.min_items} to {kind.max_items} values"


def _scalar_fix(kind: Kind) -> str:
    if isinstance(kind, Number):
        return "write a number"
    if isinstance(kind, Flag):
        return "write true or false"
    if isinstance(kind, Choice):
        return f"write one of: {', '.join(kind.values)}"
    return "write plain text"


def _join(path: str, key: str) -> str:
    return f"{path}.{key}" if path else key
