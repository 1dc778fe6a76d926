"""Reading a YAML file safely, keeping line numbers: composed nodes only, no objects built.

Aliases (``*name``) are refused: they are never needed in a fleet or event file and their
expansion can be made exponentially large. Duplicate keys are reported by the specs.
"""

from __future__ import annotations

from pathlib import Path

import yaml

from tuning.errors import ConfigError, Problem

__all__ = ["read_text", "load_yaml", "display_name", "MAX_FILE_BYTES"]

#: Largest input file accepted [bytes]; a fleet of a few hundred bikes is far below this.
MAX_FILE_BYTES = 5_000_000


def display_name(path) -> str:
    """The file as the user gave it (used in every problem line)."""
    return str(path)


def read_text(path) -> str:
    """Text of a UTF-8 file, or ConfigError naming the path (missing, unreadable, not UTF-8)."""
    name = display_name(path)
    p = Path(path)
    try:
        if p.is_dir():
            raise ConfigError([Problem(name, None, "", "is a folder; give the path of a file")])
        data = p.read_bytes()
    except FileNotFoundError:
        raise ConfigError([Problem(name, None, "", f"file not found (looked for {p.resolve()})")]) from None
    except OSError as exc:
        raise ConfigError([Problem(name, None, "", f"cannot read the file: {exc.strerror or exc}")]) from None
    if len(data) > MAX_FILE_BYTES:
        raise ConfigError([Problem(name, None, "", f"file is larger than {MAX_FILE_BYTES} bytes; is it the right file?")])
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise ConfigError(
            [Problem(name, line, "", f"not UTF-8 text (byte 0x{data[exc.start]:02x} at offset {exc.start}); save the file as UTF-8")]
        ) from None
    return text.removeprefix("\ufeff")


def load_yaml(path) -> yaml.Node:
    """Compose the YAML document of ``path`` into nodes (each with ``start_mark``)."""
    name = display_name(path)
    text = read_text(path)
    try:
        for event in yaml.parse(text, Loader=yaml.SafeLoader):
            if isinstance(event, yaml.AliasEvent):
                raise ConfigError(
                    [Problem(name, event.start_mark.line + 1, "", "YAML aliases (*name) are not supported; write the values out")]
                )
        node = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark is not None else None
        what = exc.problem or exc.context or "invalid YAML"
        raise ConfigError([Problem(name, line, "", f"YAML syntax: {what}")]) from None
    except yaml.YAMLError as exc:
        raise ConfigError([Problem(name, None, "", f"YAML syntax: {str(exc).splitlines()[0]}")]) from None
    if node is None:
        raise ConfigError([Problem(name, 1, "", "the file is empty")])
    return node

