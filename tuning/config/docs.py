"""A Markdown field reference of the fleet and event files, written from the same specs as the checks.

``python -m tuning.config.docs > fleet_configs/FORMATS.md`` regenerates the committed copy.
"""

from __future__ import annotations

from tuning.config import limits, weather
from tuning.config.event import event_spec
from tuning.config.fleet import fleet_spec
from tuning.config.spec import Either, Mapping, Obj, Sequence, Spec

__all__ = ["field_reference"]


def _rows(spec: Spec, path: str, required: bool, out: list[str]) -> None:
    schema = spec.schema()
    description = (schema.get("description") or "").replace("|", "\\|")
    if path:
        out.append(f"| `{path}` | {'yes' if required else ''} | {description} |")
    if isinstance(spec, Obj):
        for key, field in spec.fields.items():
            _rows(field.spec, f"{path}.{key}" if path else key, field.required, out)
    elif isinstance(spec, Mapping):
        _rows(spec.values, f"{path}.<name>", False, out)
    elif isinstance(spec, Sequence) and isinstance(spec.items, (Obj, Mapping, Sequence, Either)):
        _rows(spec.items, f"{path}[]", False, out)
    elif isinstance(spec, Either):
        for form in (spec.sequence, spec.mapping):
            if isinstance(form, (Obj, Mapping)):
                _rows(form, path, False, [])  # the form's own line would repeat the path
                for key, field in getattr(form, "fields", {}).items():
                    _rows(field.spec, f"{path}.{key}", field.required, out)


def field_reference() -> str:
    """Markdown: every field of both files with its required flag, default unit, range and meaning."""
    out = [
        "# carbfleet input files: field reference",
        "",
        "Generated from the loader's own specs (`python -m tuning.config.docs`). Bare numbers take the",
        "unit named; a string may carry any unit of the same kind (`4400 ft`, `62 degF`, `29.92 inHg`).",
        "",
    ]
    for title, spec in (("Fleet file", fleet_spec()), ("Event file", event_spec())):
        out += [f"## {title}", "", "| field | required | meaning |", "|---|---|---|"]
        _rows(spec, "", True, out)
        out.append("")
    out += ["## Weather table (CSV)", "", weather.__doc__.split("CSV table\n---------\n", 1)[1].split("METAR\n-----")[0].strip(), ""]
    out += ["## METAR list", "", weather.__doc__.split("METAR\n-----\n", 1)[1].strip(), ""]
    out += ["## Limits", "", " ".join(limits.__doc__.split("\n\n", 1)[1].split()), "", limits.limits_text(), ""]
    return "\n".join(out)


if __name__ == "__main__":  # pragma: no cover
    print(field_reference(), end="")
