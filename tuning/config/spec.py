"""The file models' building blocks on pydantic, and problems worded as ``file:line: field: problem``.

A YAML file is composed into nodes by :func:`tuning.config.source.load_yaml` (nothing is
constructed from tags) and turned by :func:`plain` into dicts, lists and :class:`Scalar`
texts, with the line of every field path. A pydantic model (a :class:`FileModel`) validates
that; :func:`structural_problems` words every error at the line of its YAML node, with
"did you mean" for misspelt keys, and returns them all at once. The field types below
(:func:`Quantity`, :func:`Text`, :func:`Number`, ...) carry their own JSON Schema (units and
ranges included), which :func:`json_schema` writes out with every ``$ref`` inlined.
"""

from __future__ import annotations

import difflib
import math
import types
from collections.abc import Callable
from typing import Annotated, Any, ClassVar, Union, get_args, get_origin

import yaml
from pydantic import (
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Discriminator,
    Tag,
    ValidationError,
    WithJsonSchema,
    model_validator,
)
from pydantic.json_schema import GenerateJsonSchema

from tuning.config.quantities import Range
from tuning.config.units import UnitProblem, parse_quantity, schema_pattern, unit_label
from tuning.errors import Problem

__all__ = [
    "Context",
    "Scalar",
    "FileModel",
    "plain",
    "structural_problems",
    "json_schema",
    "Quantity",
    "Text",
    "Integer",
    "Number",
    "Boolean",
    "Choice",
    "Custom",
    "Either",
    "one_line",
    "did_you_mean",
    "known_list",
    "top_level_keys",
]

_FORM_ERROR = "carbfleet_form"  #: pydantic error type of a value that fits none of an Either's forms


# --- words --------------------------------------------------------------------------------
def one_line(text: str) -> str:
    r"""``text`` with control characters escaped (user text in a message stays on one line).

    The one escaper of user text shown on a terminal or in a chart: ``\x1b``, ``\r``, ``\x07``,
    a line break or any other non-printable character is written as its Python escape.
    """
    text = str(text)
    if text.isprintable():  # the usual case, checked in C
        return text
    return "".join(ch if ch.isprintable() or ch == " " else ch.encode("unicode_escape").decode("ascii") for ch in text)


def did_you_mean(word: str, known) -> str:
    close = difflib.get_close_matches(str(word), [str(k) for k in known], n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""


def known_list(known, limit: int = 8) -> str:
    names = sorted(str(k) for k in known)
    text = ", ".join(names[:limit]) + (", …" if len(names) > limit else "")
    return f"known: {text}" if names else "none are defined"


def join(path: str, key: str | int) -> str:
    if isinstance(key, int):
        return f"{path}[{key}]"
    return f"{path}.{key}" if path else key


class Context:
    """Collects the problems of one file and the line of every field path seen."""

    def __init__(self, file: str):
        self.file = file
        self.problems: list[Problem] = []
        self.lines: dict[str, int] = {}  #: path -> line of its key (or list item)
        self.value_lines: dict[str, int] = {}  #: path -> line where its value starts
        #: names given in a mapping of names (``fuels``, ...), valid or not: a reference to a name
        #: whose entry has a problem of its own is not also called unknown
        self.names: dict[str, set[str]] = {}

    def add(self, line: int | None, path: str, message: str) -> None:
        self.problems.append(Problem(self.file, line, one_line(path), one_line(message)))

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


# --- YAML nodes -> plain values ------------------------------------------------------------
class Scalar(str):
    """A YAML scalar: its text as written, ``value`` as YAML 1.1 reads it, ``plain`` if unquoted."""

    value: Any
    plain: bool


_constructor = yaml.SafeLoader("")  # only its scalar readers are used (no object cache, no tags)
_READERS = {
    "tag:yaml.org,2002:int": _constructor.construct_yaml_int,
    "tag:yaml.org,2002:float": _constructor.construct_yaml_float,
    "tag:yaml.org,2002:bool": _constructor.construct_yaml_bool,
    "tag:yaml.org,2002:null": _constructor.construct_yaml_null,
}


def _scalar(node: yaml.ScalarNode) -> Scalar:
    """A plain scalar read by its resolved YAML 1.1 tag (int, float, bool, None, else the text)."""
    out = Scalar(node.value)
    out.plain = node.style is None
    reader = _READERS.get(node.tag)
    try:
        out.value = node.value if reader is None else reader(node)
    except Exception:  # a malformed number: keep the text, the field's check reports it
        out.value = node.value
    return out


def top_level_keys(node: yaml.Node) -> list[str]:
    """The plain keys of a top-level mapping node (empty for anything else)."""
    if not isinstance(node, yaml.MappingNode):
        return []
    return [k.value for k, _ in node.value if isinstance(k, yaml.ScalarNode)]


def plain(node: yaml.Node, ctx: Context, path: str = "", keys: list | None = None):
    """The node as dicts, lists and :class:`Scalar`; lines into ``ctx``; odd keys into ``keys``.

    ``keys`` collects (path, line, problem kind) of keys given twice (the first is kept) and of
    keys that are not plain text; they are worded by :func:`structural_problems`.
    """
    ctx.value_lines[path] = node.start_mark.line + 1
    if isinstance(node, yaml.ScalarNode):
        return _scalar(node)
    if isinstance(node, yaml.SequenceNode):
        out = []
        for i, item in enumerate(node.value):
            ctx.lines[join(path, i)] = item.start_mark.line + 1
            out.append(plain(item, ctx, join(path, i), keys))
        return out
    result: dict[str, Any] = {}
    for key_node, value_node in node.value:
        line = key_node.start_mark.line + 1
        if not isinstance(key_node, yaml.ScalarNode) or not key_node.value.strip():
            keys.append((path, line, "not plain", None))
            continue
        sub = join(path, key_node.value)
        if key_node.value in result:
            keys.append((sub, line, "twice", key_node.value))
            continue
        ctx.lines[sub] = line
        result[key_node.value] = plain(value_node, ctx, sub, keys)
    return result


def type_name(value) -> str:
    """How a value is named in a message: 'a mapping', 'a list', or its repr (shortened)."""
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    read = value.value if isinstance(value, Scalar) else value
    if read is None:
        return "nothing (null)"
    text = repr(read)
    return text if len(text) <= 80 else f"{text[:60]}… ({len(str(value)):,} characters)"


# --- the field types ---------------------------------------------------------------------
def fail(message: str) -> ValueError:
    """A problem of a value, in carbfleet's words (pydantic reports it as a ``value_error``)."""
    return ValueError(message)


def _read(value):
    return value.value if isinstance(value, Scalar) else value


def _field(kind, check: Callable, schema: dict, description: str):
    if description:
        schema = {**schema, "description": description}
    return Annotated[kind, BeforeValidator(check), WithJsonSchema(schema)]


def Quantity(accepted: Range | str, description: str = "", exclusive_minimum: bool = False):  # noqa: N802 (a type)
    """A number with an optional unit; a bare number is in the range's unit. Returns SI."""
    rng = accepted if isinstance(accepted, Range) else Range(accepted, math.nan, math.nan)
    unit, label = rng.unit, unit_label(rng.unit)
    low = None if math.isnan(rng.low) else parse_quantity(rng.low, unit)
    high = None if math.isnan(rng.high) else parse_quantity(rng.high, unit)
    if exclusive_minimum:
        range_text = f"above {rng.low:g} {label}"
    else:
        range_text = rng.text()

    def check(value):
        if isinstance(value, (dict, list)):
            raise fail(f"expected a number with an optional unit (default {label}), got {type_name(value)}")
        given = _read(value)
        try:
            si = parse_quantity(given, unit)
        except UnitProblem as exc:
            raise fail(str(exc)) from None
        too_low = low is not None and (si <= low if exclusive_minimum else si < low - 1e-12 * abs(low))
        if too_low or (high is not None and si > high + 1e-12 * abs(high)):
            raise fail(f"{given!r} is outside the accepted range {range_text}")
        return si

    number: dict[str, Any] = {"type": "number"}
    if low is not None:
        number["exclusiveMinimum" if exclusive_minimum else "minimum"] = rng.low
    if high is not None:
        number["maximum"] = rng.high
    text = (description + " " if description else "") + f"Bare number in {label}; or a string with a unit."
    text += f" Accepted range {range_text}." if low is not None else ""
    schema = {"anyOf": [number, {"type": "string", "pattern": schema_pattern(unit)}], "x-unit": label}
    return _field(float, check, schema, text)


def Text(description: str = ""):  # noqa: N802
    """Any non-empty scalar, read as its text (so ``id: 007`` stays ``"007"``)."""

    def check(value):
        if isinstance(value, (dict, list)) or _read(value) is None or str(value).strip() == "":
            raise fail(f"expected text, got {type_name(value)}")
        return str(value)

    return _field(str, check, {"type": ["string", "number"]}, description)


def Integer(description: str = "", minimum: int | None = None, maximum: int | None = None):  # noqa: N802
    def check(value):
        read = None if isinstance(value, (dict, list)) else _read(value)
        if isinstance(read, float) and read.is_integer():
            read = int(read)
        if not isinstance(read, int) or isinstance(read, bool):
            raise fail(f"expected a whole number, got {type_name(value)}")
        if (minimum is not None and read < minimum) or (maximum is not None and read > maximum):
            raise fail(f"{read} is outside the accepted range {minimum}..{maximum}")
        return read

    schema = {
        "type": "integer",
        **({"minimum": minimum} if minimum is not None else {}),
        **({"maximum": maximum} if maximum is not None else {}),
    }
    return _field(int, check, schema, description)


def Number(
    description: str = "",
    minimum: float | None = None,
    maximum: float | None = None,  # noqa: N802
    exclusive_minimum: bool = False,
):
    """A plain number without unit (a ratio, an exponent, a jet size)."""

    def check(value):
        read = None if isinstance(value, (dict, list)) else _read(value)
        if isinstance(read, str):  # "1.5e3" is a string in YAML 1.1 but a number to a reader
            try:
                read = float(read)
            except ValueError:
                pass
        if not isinstance(read, (int, float)) or isinstance(read, bool) or not math.isfinite(read):
            raise fail(f"expected a number, got {type_name(value)}")
        read = float(read)
        low_bad = minimum is not None and (read <= minimum if exclusive_minimum else read < minimum)
        if low_bad or (maximum is not None and read > maximum):
            low = "" if minimum is None else (f"above {minimum:g}" if exclusive_minimum else f"at least {minimum:g}")
            high = "" if maximum is None else f"at most {maximum:g}"
            raise fail(f"{read:g} is outside the accepted range ({', '.join(x for x in (low, high) if x)})")
        return read

    schema: dict[str, Any] = {"type": "number"}
    if minimum is not None:
        schema["exclusiveMinimum" if exclusive_minimum else "minimum"] = minimum
    if maximum is not None:
        schema["maximum"] = maximum
    return _field(float, check, schema, description)


def Boolean(description: str = ""):  # noqa: N802
    def check(value):
        read = None if isinstance(value, (dict, list)) else _read(value)
        if not isinstance(read, bool):
            raise fail(f"expected true or false, got {type_name(value)}")
        return read

    return _field(bool, check, {"type": "boolean"}, description)


def Choice(choices: tuple, description: str = ""):  # noqa: N802
    """One of a fixed set of words (or numbers)."""

    def check(value):
        read = None if isinstance(value, (dict, list)) else _read(value)
        if read in choices and not isinstance(read, bool):
            return read
        hint = did_you_mean(value, choices) if isinstance(value, str) else ""
        raise fail(f"expected one of {', '.join(str(c) for c in choices)}, got {type_name(value)}{hint}")

    return _field(type(choices[0]), check, {"enum": list(choices)}, description)


def Custom(read: Callable[[Any], Any], schema: dict, description: str = "", colon_as_text: bool = False):  # noqa: N802
    """A scalar read by ``read``, which returns a value or raises ValueError with a message.

    ``colon_as_text``: an unquoted scalar with a colon is passed as its text: YAML 1.1 reads
    ``32:1`` as the base-60 integer 1921, YAML 1.2 (editors, the JSON Schema) as the text "32:1".
    """

    def check(value):
        if isinstance(value, (dict, list)):
            raise fail(f"expected a single value, got {type_name(value)}")
        as_text = colon_as_text and isinstance(value, Scalar) and value.plain and ":" in value
        try:
            return read(str(value) if as_text else _read(value))
        except ValueError as exc:
            raise fail(str(exc)) from None

    return _field(float, check, schema, description)


def Either(forms: dict[str, Any], kind_of: Callable[[Any], str | None], expected: str, description: str = ""):  # noqa: N802
    """One of several forms (``{tag: type}``), chosen by ``kind_of(value)`` (a tag, or None: none fits)."""
    members = tuple(Annotated[tp, Tag(tag)] for tag, tp in forms.items())
    schema_extra = {"description": description} if description else {}
    return Annotated[
        Union[members],  # noqa: UP007 (a union of a tuple of types built at run time)
        Discriminator(
            kind_of,
            custom_error_type=_FORM_ERROR,
            custom_error_message=expected,
        ),
        _EitherSchema(schema_extra),
    ]


class _EitherSchema:
    """Writes an :func:`Either` as ``anyOf`` of its forms (what an editor shows as alternatives)."""

    def __init__(self, extra: dict):
        self.extra = extra

    def __get_pydantic_json_schema__(self, core_schema, handler):
        schema = handler(core_schema)
        forms = schema.pop("oneOf", None) or schema.pop("anyOf", [])
        schema.pop("discriminator", None)
        return {"anyOf": forms, **schema, **self.extra}


# --- models ------------------------------------------------------------------------------
class FileModel(BaseModel):
    """A mapping with known keys. ``one_of``: groups of keys of which exactly one must be given;
    ``null_is_empty``: ``key:`` with nothing after it reads as an empty mapping."""

    model_config = ConfigDict(extra="forbid", protected_namespaces=(), frozen=True, populate_by_name=False)
    one_of: ClassVar[tuple[tuple[str, ...], ...]] = ()
    null_is_empty: ClassVar[bool] = False

    @model_validator(mode="before")
    @classmethod
    def _null_is_empty(cls, data):
        if cls.null_is_empty and _read(data) is None and not isinstance(data, (dict, list)):
            return {}
        return data

    @classmethod
    def __get_pydantic_json_schema__(cls, core_schema, handler):
        schema = handler(core_schema)
        target = handler.resolve_ref_schema(schema)
        if cls.one_of:
            target["allOf"] = [{"oneOf": [{"required": [k]} for k in group]} for group in cls.one_of]
        if cls.null_is_empty:
            return {"anyOf": [schema, {"type": "null"}], "description": target.get("description", "")}
        return schema

    @classmethod
    def keys(cls) -> list[str]:
        return [f.alias or name for name, f in cls.model_fields.items()]


def _unwrap(tp):
    while get_origin(tp) is Annotated:
        tp = get_args(tp)[0]
    return tp


def _is_model(tp) -> bool:
    return isinstance(tp, type) and issubclass(tp, BaseModel)


def type_at(tp, loc, annotated: bool = False) -> Any:
    """The type found at ``loc`` (keys, indices and form tags) below the type ``tp``; None if none.

    ``annotated``: keep the ``Annotated`` metadata of the type found (its length limits).
    """
    for part in loc:
        tp = _unwrap(tp)
        forms = _tags(tp)
        if part in forms:
            tp = forms[part]
            continue
        if forms:
            fits = [m for m in forms.values() if _holds(_unwrap(m), part)]
            tp = _unwrap(fits[0]) if fits else None
        if _is_model(tp):
            fields = {f.alias or name: f for name, f in tp.model_fields.items()}
            if part not in fields:
                return None
            field = fields[part]
            tp = Annotated[field.annotation, *field.metadata] if field.metadata else field.annotation
        elif get_origin(tp) is dict and isinstance(part, str):
            tp = get_args(tp)[1]
        elif get_origin(tp) is list and isinstance(part, int):
            tp = get_args(tp)[0]
        else:
            return None
    return tp if annotated else _unwrap(tp)


def _holds(tp, part) -> bool:
    """Whether ``tp`` is a list (``part`` an index) or a mapping (``part`` a key)."""
    if isinstance(part, int):
        return get_origin(tp) is list
    return _is_model(tp) or get_origin(tp) is dict


def _tags(tp) -> dict:
    """``{tag: type}`` of an :func:`Either`'s forms; empty for any other type."""
    tp = _unwrap(tp)
    if get_origin(tp) not in (Union, types.UnionType):
        return {}
    forms = {}
    for member in get_args(tp):
        inner, *meta = get_args(member)
        other = [m for m in meta if not isinstance(m, Tag)]
        for tag in (m.tag for m in meta if isinstance(m, Tag)):
            forms[tag] = Annotated[inner, *other] if other else inner
    return forms


def _path(root, loc) -> tuple[str, tuple]:
    """The dotted path of an error location, and the location without form tags."""
    data_loc, tp, path = [], root, ""
    for part in loc:
        forms = _tags(tp)
        if part in forms:
            tp = forms[part]
            continue
        data_loc.append(part)
        path = join(path, part)
        tp = type_at(tp, (part,)) if tp is not None else None
    return path, tuple(data_loc)


def _words(error: dict, root, ctx: Context) -> tuple[int | None, str, str]:
    """(line, path, problem) of one pydantic error, in carbfleet's words."""
    path, loc = _path(root, error["loc"])
    kind, value = error["type"], error.get("input")
    line = ctx.value_lines.get(path)
    here = type_at(root, error["loc"])
    if kind == "value_error":
        return line, path, str(error["ctx"]["error"])
    if kind == _FORM_ERROR:
        return line, path, f"{error['msg']}, got {type_name(value)}"
    if kind == "missing":
        return ctx.value_lines.get(path.rsplit(".", 1)[0] if "." in path else ""), path, "missing; this key is required"
    if kind == "extra_forbidden":
        parent = type_at(root, error["loc"][:-1])
        allowed = parent.keys() if _is_model(parent) else []
        key = loc[-1]
        return (
            ctx.lines.get(path),
            path,
            f"unknown key '{key}'{did_you_mean(key, allowed)} (allowed: {', '.join(allowed)})",
        )
    if _is_model(here) and kind in ("model_type", "model_attributes_type", "dict_type"):
        return line, path, f"expected a mapping with keys {', '.join(here.keys())}, got {type_name(value)}"
    if kind == "dict_type":
        return line, path, f"expected a mapping of names, got {type_name(value)}"
    if kind == "list_type":
        return line, path, f"expected a list, got {type_name(value)}"
    if kind in ("too_short", "too_long") and get_origin(here) is dict:
        return (
            line,
            path,
            f"expected at least {error['ctx']['min_length']} entr{'y' if error['ctx']['min_length'] == 1 else 'ies'}",
        )
    if kind in ("too_short", "too_long"):
        meta = [
            m
            for given in get_args(type_at(root, error["loc"], annotated=True))[1:]
            for m in (getattr(given, "metadata", None) or [given])
        ]  # a Field(...)'s limits, or the limits
        low = max((m.min_length for m in meta if getattr(m, "min_length", None) is not None), default=0)
        high = min((m.max_length for m in meta if getattr(m, "max_length", None) is not None), default=None)
        want = str(low) if low == high else f"at least {low}"
        return line, path, f"expected {want} entries, got {error['ctx']['actual_length']}"
    return line, path, error["msg"]  # pragma: no cover - every kind the models raise is worded above


def structural_problems(model: type[FileModel], data, ctx: Context, keys: list) -> FileModel | None:
    """Validate ``data`` (from :func:`plain`) with ``model``; every problem into ``ctx``, at once.

    Returns the validated model, or None when the file has any problem.
    """
    found = len(ctx.problems)
    for path, line, what, key in keys:
        parent = type_at(model, _loc(path)[:-1] if what == "twice" else _loc(path))
        names = get_origin(parent) is dict
        if what == "twice":
            ctx.add(
                line,
                path,
                f"the name '{key}' is given twice; names must be unique" if names else "given twice; keep one",
            )
        else:
            ctx.add(line, path, "expected a plain name as key" if names else "expected a plain key")
    try:
        result = model.model_validate(data)
    except ValidationError as exc:
        errors = exc.errors(include_url=False)  # a key missing is said after the other keys, as in the file
        for error in sorted(errors, key=lambda e: e["type"] == "missing"):
            ctx.add(*_words(error, model, ctx))
        result = None
    _check_key_groups(model, data, "", ctx)
    return result if len(ctx.problems) == found else None


def _loc(path: str) -> tuple:
    """``a.b[2].c`` -> ("a", "b", 2, "c") (names with dots stay whole where a mapping holds them)."""
    out: list = []
    for part in path.replace("[", ".[").split("."):
        if part.startswith("["):
            out.append(int(part[1:-1]))
        elif part:
            out.append(part)
    return tuple(out)


def _check_key_groups(tp, data, path: str, ctx: Context) -> None:
    """The ``one_of`` groups of every model in ``data``, checked whatever else is wrong in it."""
    tp = _unwrap(tp)
    if get_origin(tp) in (Union, types.UnionType):
        tp = _pick(tp, data)
    if _is_model(tp) and isinstance(data, dict):
        for group in tp.one_of:
            given = [k for k in group if k in data]
            if len(given) != 1:
                what = "none" if not given else ", ".join(given)
                ctx.add(
                    ctx.value_lines.get(path),
                    path or "(top)",
                    f"give exactly one of {', '.join(group)} (given: {what})",
                )
        fields = {f.alias or name: f.annotation for name, f in tp.model_fields.items()}
        for key, value in data.items():
            if key in fields:
                _check_key_groups(fields[key], value, join(path, key), ctx)
    elif get_origin(tp) is dict and isinstance(data, dict):
        for key, value in data.items():
            _check_key_groups(get_args(tp)[1], value, join(path, key), ctx)
    elif get_origin(tp) is list and isinstance(data, list):
        for i, value in enumerate(data):
            _check_key_groups(get_args(tp)[0], value, join(path, i), ctx)


def _pick(union, data):
    for member in get_args(union):
        inner = _unwrap(member)
        if (isinstance(data, list) and get_origin(inner) is list) or (isinstance(data, dict) and _is_model(inner)):
            return inner
    return None


# --- JSON Schema ---------------------------------------------------------------------------
class _Schema(GenerateJsonSchema):
    """pydantic's JSON Schema without titles and defaults (the descriptions say what a default is)."""

    def field_title_should_be_set(self, schema) -> bool:
        return False

    def default_schema(self, schema):
        return self.generate_inner(schema["schema"])


_KEY_ORDER = (
    "type",
    "enum",
    "pattern",
    "minimum",
    "exclusiveMinimum",
    "maximum",
    "items",
    "minItems",
    "maxItems",
    "properties",
    "additionalProperties",
    "minProperties",
    "required",
    "allOf",
    "anyOf",
    "description",
    "x-unit",
)


def _inline(schema, defs: dict):
    if isinstance(schema, list):
        return [_inline(s, defs) for s in schema]
    if not isinstance(schema, dict):
        return schema
    if "$ref" in schema:
        target = defs[schema["$ref"].rsplit("/", 1)[1]]
        return _inline({**target, **{k: v for k, v in schema.items() if k != "$ref"}}, defs)
    out = {}
    for key, value in schema.items():
        if key == "title":
            continue
        if key == "properties":
            out[key] = {name: _inline(sub, defs) for name, sub in value.items()}
        else:
            out[key] = _inline(value, defs)
    return dict(
        sorted(out.items(), key=lambda item: _KEY_ORDER.index(item[0]) if item[0] in _KEY_ORDER else len(_KEY_ORDER))
    )


def json_schema(model: type[BaseModel]) -> dict:
    """The JSON Schema (draft 2020-12) of ``model``, every ``$ref`` written out in place."""
    schema = model.model_json_schema(schema_generator=_Schema)
    defs = schema.pop("$defs", {})
    return _inline(schema, defs)
