"""A small declarative description of the file formats: one spec gives both the checks and the JSON Schema.

Each spec class checks a YAML node (from :func:`tuning.config.source.load_yaml`, so every
node has a line number) and returns a plain Python value, or :data:`INVALID` after recording
a :class:`~tuning.errors.Problem`. The same spec writes its JSON Schema (draft 2020-12), so
the editor's view of a file and the loader's cannot drift apart.

Values are never constructed by YAML: scalars are read from their text here, so no tag in a
file can create an object.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import yaml

from tuning.config.units import UnitProblem, parse_quantity
from tuning.errors import Problem

__all__ = [
    "INVALID",
    "Context",
    "Spec",
    "Quantity",
    "Text",
    "Integer",
    "Number",
    "Boolean",
    "Choice",
    "Obj",
    "Mapping",
    "Sequence",
    "Either",
    "Field",
    "Custom",
]

INVALID = object()  #: returned by a spec whose node had a problem (already recorded)

_NUMBER_WITH_UNIT = r"^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*\S*.*$"


class Context:
    """Collects the problems of one file and the line of every field path seen."""

    def __init__(self, file: str):
        self.file = file
        self.problems: list[Problem] = []
        self.lines: dict[str, int] = {}
        #: every name given in a :class:`Mapping`, by the mapping's path, valid or not (so a
        #: reference to a name whose entry has a problem is not also called unknown)
        self.names: dict[str, set[str]] = {}

    def add(self, line: int | None, path: str, message: str) -> None:
        self.problems.append(Problem(self.file, line, one_line(path), one_line(message)))

    def at(self, node: yaml.Node, path: str, message: str) -> None:
        self.add(line_of(node), path, message)

    def line(self, path: str) -> int | None:
        """Line of ``path``, or of its nearest recorded parent."""
        while path:
            if path in self.lines:
                return self.lines[path]
            cut = max(path.rfind("."), path.rfind("["))
            path = path[:cut] if cut > 0 else ""
        return self.lines.get("", None)

    def at_path(self, path: str, message: str) -> None:
        self.add(self.line(path), path, message)


def top_level_keys(node: yaml.Node) -> list[str]:
    """The plain keys of a top-level mapping node (empty for anything else)."""
    if not isinstance(node, yaml.MappingNode):
        return []
    return [k.value for k, _ in node.value if isinstance(k, yaml.ScalarNode)]


def one_line(text: str) -> str:
    r"""``text`` with control characters escaped (user text in a message stays on one line).

    The one escaper of user text shown on a terminal or in a chart: ``\x1b``, ``\r``, ``\x07``,
    a line break or any other non-printable character is written as its Python escape.
    """
    text = str(text)
    if text.isprintable():  # the usual case, checked in C
        return text
    return "".join(ch if ch.isprintable() or ch == " " else ch.encode("unicode_escape").decode("ascii") for ch in text)


def line_of(node: yaml.Node) -> int:
    return node.start_mark.line + 1


def join(path: str, key: str | int) -> str:
    if isinstance(key, int):
        return f"{path}[{key}]"
    return f"{path}.{key}" if path else key


def did_you_mean(word: str, known) -> str:
    close = difflib.get_close_matches(str(word), [str(k) for k in known], n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""


def known_list(known, limit: int = 8) -> str:
    names = sorted(str(k) for k in known)
    text = ", ".join(names[:limit]) + (", …" if len(names) > limit else "")
    return f"known: {text}" if names else "none are defined"


_constructor = yaml.SafeLoader("")  # only its scalar readers are used (no object cache, no tags)
_READERS = {
    "tag:yaml.org,2002:int": _constructor.construct_yaml_int,
    "tag:yaml.org,2002:float": _constructor.construct_yaml_float,
    "tag:yaml.org,2002:bool": _constructor.construct_yaml_bool,
    "tag:yaml.org,2002:null": _constructor.construct_yaml_null,
}


def scalar_value(node: yaml.ScalarNode):
    """Python value of a plain scalar by its resolved YAML 1.1 tag: int, float, bool, None, else the text."""
    reader = _READERS.get(node.tag)
    if reader is None:
        return node.value
    try:
        return reader(node)
    except Exception:  # a malformed number: keep the text, the spec reports it
        return node.value


def _type_name(node: yaml.Node) -> str:
    if isinstance(node, yaml.MappingNode):
        return "a mapping"
    if isinstance(node, yaml.SequenceNode):
        return "a list"
    value = scalar_value(node)
    if value is None:
        return "nothing (null)"
    text = repr(value)
    return text if len(text) <= 80 else f"{text[:60]}… ({len(node.value):,} characters)"


class Spec:
    """Base: ``check`` returns a Python value or INVALID; ``schema`` returns a JSON Schema dict."""

    description: str = ""

    def check(self, node: yaml.Node, path: str, ctx: Context):  # pragma: no cover - abstract
        raise NotImplementedError

    def schema(self) -> dict:  # pragma: no cover - abstract
        raise NotImplementedError

    def _with_description(self, schema: dict) -> dict:
        if self.description:
            schema["description"] = self.description
        return schema


@dataclass
class Quantity(Spec):
    """A number with an optional unit; bare numbers are in ``unit``. Range in ``unit``."""

    unit: str
    description: str = ""
    minimum: float | None = None
    maximum: float | None = None
    exclusive_minimum: bool = False
    unit_label: str = ""  # how the unit is written in messages ("degC", "%")

    def check(self, node, path, ctx):
        if not isinstance(node, yaml.ScalarNode):
            ctx.at(node, path, f"expected a number with an optional unit (default {self.label}), got {_type_name(node)}")
            return INVALID
        value = scalar_value(node)
        try:
            si = parse_quantity(value, self.unit)
        except UnitProblem as exc:
            ctx.at(node, path, str(exc))
            return INVALID
        low = None if self.minimum is None else parse_quantity(self.minimum, self.unit)
        high = None if self.maximum is None else parse_quantity(self.maximum, self.unit)
        too_low = low is not None and (si <= low if self.exclusive_minimum else si < low - 1e-12 * abs(low))
        too_high = high is not None and si > high + 1e-12 * abs(high)
        if too_low or too_high:
            ctx.at(node, path, f"{value!r} is outside the accepted range {self.range_text()}")
            return INVALID
        return si

    @property
    def label(self) -> str:
        return self.unit_label or self.unit

    def range_text(self) -> str:
        def fmt(x):
            return f"{x:g}"

        if self.minimum is not None and self.maximum is not None:
            return f"{fmt(self.minimum)}..{fmt(self.maximum)} {self.label}"
        if self.minimum is not None:
            return f"{'above' if self.exclusive_minimum else 'at least'} {fmt(self.minimum)} {self.label}"
        return f"at most {fmt(self.maximum)} {self.label}"

    def schema(self):
        number: dict[str, Any] = {"type": "number"}
        if self.minimum is not None:
            number["exclusiveMinimum" if self.exclusive_minimum else "minimum"] = self.minimum
        if self.maximum is not None:
            number["maximum"] = self.maximum
        text = {"type": "string", "pattern": _NUMBER_WITH_UNIT}
        desc = (self.description + " " if self.description else "") + f"Bare number in {self.label}; or a string with a unit."
        if self.minimum is not None or self.maximum is not None:
            desc += f" Accepted range {self.range_text()}."
        return {"anyOf": [number, text], "description": desc}


@dataclass
class Text(Spec):
    """Any non-empty scalar, read as its text (so ``id: 007`` stays ``"007"``)."""

    description: str = ""

    def check(self, node, path, ctx):
        if not isinstance(node, yaml.ScalarNode) or scalar_value(node) is None or node.value.strip() == "":
            ctx.at(node, path, f"expected text, got {_type_name(node)}")
            return INVALID
        return node.value

    def schema(self):
        return self._with_description({"type": ["string", "number"]})


@dataclass
class Integer(Spec):
    description: str = ""
    minimum: int | None = None
    maximum: int | None = None

    def check(self, node, path, ctx):
        value = scalar_value(node) if isinstance(node, yaml.ScalarNode) else None
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        if not isinstance(value, int) or isinstance(value, bool):
            ctx.at(node, path, f"expected a whole number, got {_type_name(node)}")
            return INVALID
        if (self.minimum is not None and value < self.minimum) or (self.maximum is not None and value > self.maximum):
            ctx.at(node, path, f"{value} is outside the accepted range {self.minimum}..{self.maximum}")
            return INVALID
        return value

    def schema(self):
        s: dict[str, Any] = {"type": "integer"}
        if self.minimum is not None:
            s["minimum"] = self.minimum
        if self.maximum is not None:
            s["maximum"] = self.maximum
        return self._with_description(s)


@dataclass
class Number(Spec):
    """A plain number without unit (a ratio, an exponent, a jet size)."""

    description: str = ""
    minimum: float | None = None
    maximum: float | None = None
    exclusive_minimum: bool = False

    def check(self, node, path, ctx):
        value = scalar_value(node) if isinstance(node, yaml.ScalarNode) else None
        if isinstance(value, str):  # "1.5e3" is a string in YAML 1.1 but a number to a reader
            try:
                value = float(value)
            except ValueError:
                pass
        if not isinstance(value, (int, float)) or isinstance(value, bool) or not math.isfinite(value):
            ctx.at(node, path, f"expected a number, got {_type_name(node)}")
            return INVALID
        value = float(value)
        low_bad = self.minimum is not None and (value <= self.minimum if self.exclusive_minimum else value < self.minimum)
        if low_bad or (self.maximum is not None and value > self.maximum):
            low = "" if self.minimum is None else (f"above {self.minimum:g}" if self.exclusive_minimum else f"at least {self.minimum:g}")
            high = "" if self.maximum is None else f"at most {self.maximum:g}"
            ctx.at(node, path, f"{value:g} is outside the accepted range ({', '.join(x for x in (low, high) if x)})")
            return INVALID
        return value

    def schema(self):
        s: dict[str, Any] = {"type": "number"}
        if self.minimum is not None:
            s["exclusiveMinimum" if self.exclusive_minimum else "minimum"] = self.minimum
        if self.maximum is not None:
            s["maximum"] = self.maximum
        return self._with_description(s)


@dataclass
class Boolean(Spec):
    description: str = ""

    def check(self, node, path, ctx):
        value = scalar_value(node) if isinstance(node, yaml.ScalarNode) else None
        if not isinstance(value, bool):
            ctx.at(node, path, f"expected true or false, got {_type_name(node)}")
            return INVALID
        return value

    def schema(self):
        return self._with_description({"type": "boolean"})


@dataclass
class Choice(Spec):
    """One of a fixed set of words (or numbers)."""

    choices: tuple
    description: str = ""

    def check(self, node, path, ctx):
        value = scalar_value(node) if isinstance(node, yaml.ScalarNode) else None
        if value in self.choices and not isinstance(value, bool):
            return value
        options = ", ".join(str(c) for c in self.choices)
        hint = did_you_mean(node.value, self.choices) if isinstance(node, yaml.ScalarNode) else ""
        ctx.at(node, path, f"expected one of {options}, got {_type_name(node)}{hint}")
        return INVALID

    def schema(self):
        return self._with_description({"enum": list(self.choices)})


@dataclass
class Field:
    spec: Spec
    required: bool = False


@dataclass
class Obj(Spec):
    """A mapping with known keys. ``one_of``: groups of keys of which exactly one must be given."""

    fields: dict[str, Field]
    description: str = ""
    one_of: tuple[tuple[str, ...], ...] = ()
    allow_null: bool = False  # ``key:`` with nothing after it reads as an empty mapping

    def check(self, node, path, ctx):
        if self.allow_null and isinstance(node, yaml.ScalarNode) and scalar_value(node) is None:
            return {}
        if not isinstance(node, yaml.MappingNode):
            ctx.at(node, path, f"expected a mapping with keys {', '.join(self.fields)}, got {_type_name(node)}")
            return INVALID
        result: dict[str, Any] = {}
        seen: set[str] = set()
        for key_node, value_node in node.value:
            key = key_node.value if isinstance(key_node, yaml.ScalarNode) else None
            if key is None:
                ctx.at(key_node, path, "expected a plain key")
                continue
            sub = join(path, key)
            ctx.lines[sub] = line_of(key_node)
            if key in seen:
                ctx.at(key_node, sub, "given twice; keep one")
                continue
            seen.add(key)
            if key not in self.fields:
                ctx.at(key_node, sub, f"unknown key '{key}'{did_you_mean(key, self.fields)} (allowed: {', '.join(self.fields)})")
                continue
            value = self.fields[key].spec.check(value_node, sub, ctx)
            if value is not INVALID:
                result[key] = value
        for key, f in self.fields.items():
            if f.required and key not in seen:
                ctx.at(node, join(path, key), "missing; this key is required")
        for group in self.one_of:
            given = [k for k in group if k in seen]
            if len(given) != 1:
                what = "none" if not given else ", ".join(given)
                ctx.at(node, path or "(top)", f"give exactly one of {', '.join(group)} (given: {what})")
        return result

    def schema(self):
        s: dict[str, Any] = {
            "type": "object",
            "properties": {k: f.spec.schema() for k, f in self.fields.items()},
            "additionalProperties": False,
        }
        required = [k for k, f in self.fields.items() if f.required]
        if required:
            s["required"] = required
        if self.one_of:
            s["allOf"] = [{"oneOf": [{"required": [k]} for k in group]} for group in self.one_of]
        s = self._with_description(s)
        if self.allow_null:
            s = {"anyOf": [s, {"type": "null"}], "description": s.get("description", "")}
        return s


@dataclass
class Mapping(Spec):
    """A mapping from user-chosen names to values of one spec."""

    values: Spec
    description: str = ""
    min_items: int = 0

    def check(self, node, path, ctx):
        if not isinstance(node, yaml.MappingNode):
            ctx.at(node, path, f"expected a mapping of names, got {_type_name(node)}")
            return INVALID
        result: dict[str, Any] = {}
        names = ctx.names.setdefault(path, set())
        for key_node, value_node in node.value:
            if not isinstance(key_node, yaml.ScalarNode) or not key_node.value.strip():
                ctx.at(key_node, path, "expected a plain name as key")
                continue
            key = key_node.value
            names.add(key)
            sub = join(path, key)
            ctx.lines[sub] = line_of(key_node)
            if key in result:
                ctx.at(key_node, sub, f"the name '{key}' is given twice; names must be unique")
                continue
            value = self.values.check(value_node, sub, ctx)
            result[key] = value
        if len(node.value) < self.min_items:
            ctx.at(node, path, f"expected at least {self.min_items} entr{'y' if self.min_items == 1 else 'ies'}")
        return {k: v for k, v in result.items() if v is not INVALID}

    def schema(self):
        s = {"type": "object", "additionalProperties": self.values.schema()}
        if self.min_items:
            s["minProperties"] = self.min_items
        return self._with_description(s)


@dataclass
class Sequence(Spec):
    items: Spec
    description: str = ""
    min_items: int = 0
    max_items: int | None = None

    def check(self, node, path, ctx):
        if not isinstance(node, yaml.SequenceNode):
            ctx.at(node, path, f"expected a list, got {_type_name(node)}")
            return INVALID
        n = len(node.value)
        if n < self.min_items or (self.max_items is not None and n > self.max_items):
            want = str(self.min_items) if self.max_items == self.min_items else f"at least {self.min_items}"
            ctx.at(node, path, f"expected {want} entries, got {n}")
            return INVALID
        result = []
        for i, item in enumerate(node.value):
            sub = join(path, i)
            ctx.lines[sub] = line_of(item)
            result.append(self.items.check(item, sub, ctx))
        return result  # INVALID entries kept in place so indices stay those of the file

    def schema(self):
        s: dict[str, Any] = {"type": "array", "items": self.items.schema()}
        if self.min_items:
            s["minItems"] = self.min_items
        if self.max_items is not None:
            s["maxItems"] = self.max_items
        return self._with_description(s)


@dataclass
class Either(Spec):
    """A scalar form or a list form or a mapping form, chosen by the node's kind."""

    scalar: Spec | None = None
    sequence: Spec | None = None
    mapping: Spec | None = None
    description: str = ""
    expected: str = ""

    def check(self, node, path, ctx):
        if isinstance(node, yaml.ScalarNode) and self.scalar is not None:
            return self.scalar.check(node, path, ctx)
        if isinstance(node, yaml.SequenceNode) and self.sequence is not None:
            return self.sequence.check(node, path, ctx)
        if isinstance(node, yaml.MappingNode) and self.mapping is not None:
            return self.mapping.check(node, path, ctx)
        ctx.at(node, path, f"expected {self.expected}, got {_type_name(node)}")
        return INVALID

    def schema(self):
        forms = [s.schema() for s in (self.scalar, self.sequence, self.mapping) if s is not None]
        return self._with_description({"anyOf": forms})


@dataclass
class Custom(Spec):
    """A scalar read by a function that returns a value or raises ValueError with a message."""

    read: Callable[[Any], Any]
    schema_dict: dict = field(default_factory=dict)
    description: str = ""
    #: an unquoted scalar with a colon is passed as its text: YAML 1.1 reads ``32:1`` as the
    #: base-60 integer 1921, YAML 1.2 (editors, the JSON Schema) as the text "32:1"
    colon_as_text: bool = False

    def check(self, node, path, ctx):
        if not isinstance(node, yaml.ScalarNode):
            ctx.at(node, path, f"expected a single value, got {_type_name(node)}")
            return INVALID
        plain_with_colon = self.colon_as_text and node.style is None and ":" in node.value
        try:
            return self.read(node.value if plain_with_colon else scalar_value(node))
        except ValueError as exc:
            ctx.at(node, path, str(exc))
            return INVALID

    def schema(self):
        return self._with_description(dict(self.schema_dict))
