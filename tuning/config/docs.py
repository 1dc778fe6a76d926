"""A Markdown field reference of the fleet and event files, written from the file models' JSON Schemas.

``python -m tuning.config.docs > fleet_configs/FORMATS.md`` regenerates the committed copy.
"""

from __future__ import annotations

from tuning.config import event_schema, fleet_schema, limits, weather

__all__ = ["field_reference"]


def _rows(schema: dict, path: str, required: bool, out: list[str]) -> None:
    """One table row per field below ``schema`` (objects, names ``<name>``, list items ``[]``, forms)."""
    description = (schema.get("description") or "").replace("|", "\\|")
    if path:
        out.append(f"| `{path}` | {'yes' if required else ''} | {description} |")
    forms = schema.get("anyOf", [])
    if "properties" in schema:
        for key, sub in schema["properties"].items():
            _rows(sub, f"{path}.{key}" if path else key, key in schema.get("required", ()), out)
    elif isinstance(schema.get("additionalProperties"), dict):
        _rows(schema["additionalProperties"], f"{path}.<name>", False, out)
    elif schema.get("type") == "array" and _is_structure(schema["items"]):
        _rows(schema["items"], f"{path}[]", False, out)
    elif any("properties" in form for form in forms):  # a mapping that may be left empty
        (form,) = [form for form in forms if "properties" in form]
        for key, sub in form["properties"].items():
            _rows(sub, f"{path}.{key}", key in form.get("required", ()), out)
    elif any(_is_structure(form) for form in forms):  # either a list or a mapping: their fields
        for form in forms:
            for key, sub in form.get("properties", {}).items():
                _rows(sub, f"{path}.{key}", key in form.get("required", ()), out)


def _is_structure(schema: dict) -> bool:
    return (
        "properties" in schema
        or isinstance(schema.get("additionalProperties"), dict)
        or schema.get("type") == "array"
        or any(_is_structure(f) for f in schema.get("anyOf", []))
    )


def field_reference() -> str:
    """Markdown: every field of both files with its required flag, default unit, range and meaning."""
    out = [
        "# carbfleet input files: field reference",
        "",
        "Generated from the loader's own file models (`python -m tuning.config.docs`). Bare numbers take the",
        "unit named; a string may carry any unit of the same kind (`4400 ft`, `62 degF`, `29.92 inHg`).",
        "",
    ]
    for title, schema in (("Fleet file", fleet_schema()), ("Event file", event_schema())):
        out += [f"## {title}", "", "| field | required | meaning |", "|---|---|---|"]
        _rows(schema, "", True, out)
        out.append("")
    out += [
        "## Weather table (CSV)",
        "",
        weather.__doc__.split("CSV table\n---------\n", 1)[1].split("METAR\n-----")[0].strip(),
        "",
    ]
    out += ["## METAR list", "", weather.__doc__.split("METAR\n-----\n", 1)[1].strip(), ""]
    out += ["## Limits", "", " ".join(limits.__doc__.split("\n\n", 1)[1].split()), "", limits.limits_text(), ""]
    return "\n".join(out)


if __name__ == "__main__":  # pragma: no cover
    print(field_reference(), end="")
