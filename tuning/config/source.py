"""Reading a YAML file safely, keeping line numbers: composed nodes only, no objects built.

Only regular files are read (a device, a named pipe or ``/dev/zero`` is refused before it is
opened, so nothing can hang or fill the memory), and at most :data:`MAX_FILE_BYTES` + 1
bytes are read whatever the file claims to be.

Aliases (``*name``) are refused: they are never needed in a fleet or event file and their
expansion can be made exponentially large. Nesting deeper than :data:`MAX_NESTING` and more
than :data:`MAX_NODES` values are refused while the file is scanned, before any node is built.
Duplicate keys are reported by tuning.config.spec.plain.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

import yaml

from tuning.errors import ConfigError, Problem

__all__ = ["read_text", "load_yaml", "display_name", "MAX_FILE_BYTES", "MAX_NESTING", "MAX_NODES"]

#: Largest input file accepted [bytes]; a fleet of a few hundred bikes is far below this.
MAX_FILE_BYTES = 5_000_000
#: Deepest nesting of lists and mappings accepted in a YAML file (a fleet file needs 5).
MAX_NESTING = 40
#: Most YAML values (scalars, lists, mappings) accepted in one file: a fleet of the largest
#: accepted size (:data:`tuning.config.limits.MAX_BIKES` bikes, each with its own settings and
#: reference) needs about a third of it. Scanning this many takes about 2 s.
MAX_NODES = 200_000


def display_name(path) -> str:
    """The file as the user gave it (used in every problem line)."""
    return str(path)


def _refuse(name: str, message: str, line: int | None = None) -> ConfigError:
    return ConfigError([Problem(name, line, "", message)])


def _kind(mode: int) -> str:
    if stat.S_ISFIFO(mode):
        return "a named pipe"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "a special file"


def read_text(path) -> str:
    """Text of a UTF-8 regular file, or ConfigError naming the path.

    Refused: a missing or unreadable file, a folder, anything that is not a regular file
    (device, named pipe, socket), more than :data:`MAX_FILE_BYTES` bytes, text not in UTF-8.
    """
    name = display_name(path)
    p = Path(path)
    try:
        mode = os.stat(p).st_mode
        if stat.S_ISDIR(mode):
            raise _refuse(name, "is a folder; give the path of a file")
        if not stat.S_ISREG(mode):
            raise _refuse(name, f"is {_kind(mode)}, not a regular file; save the data to a file and give its path")
        # O_NONBLOCK: should the path become a named pipe after the check, open() does not wait
        with os.fdopen(os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0)), "rb") as handle:
            mode = os.fstat(handle.fileno()).st_mode
            if not stat.S_ISREG(mode):
                raise _refuse(name, f"is {_kind(mode)}, not a regular file; save the data to a file and give its path")
            data = handle.read(MAX_FILE_BYTES + 1)
    except FileNotFoundError:
        raise _refuse(name, f"file not found (looked for {p.resolve()})") from None
    except OSError as exc:
        raise _refuse(name, f"cannot read the file: {exc.strerror or exc}") from None
    if len(data) > MAX_FILE_BYTES:
        raise _refuse(name, f"file is larger than {MAX_FILE_BYTES:,} bytes (the limit); is it the right file?")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise _refuse(
            name, f"not UTF-8 text (byte 0x{data[exc.start]:02x} at offset {exc.start}); save the file as UTF-8", line
        ) from None
    return text.removeprefix("\ufeff")


def _scan(name: str, text: str, limits: dict[str, tuple[int, str]]) -> None:
    """Check the parse events before any node is built: no aliases, bounded nesting and size.

    ``limits`` maps a top-level key to (most entries, what an entry is): the list under that
    key may have at most that many entries. They are counted as the file is scanned, so a
    huge file is refused at the first entry beyond the limit, not after reading it all.
    """
    depth = 0
    nodes = 0
    root_is_mapping = False
    key_next = False  # in the top mapping: the next node is a key
    top_key = None  # the top-level key whose value is being scanned
    counting: tuple[int, str] | None = None
    items = 0
    for event in yaml.parse(text, Loader=yaml.SafeLoader):
        line = event.start_mark.line + 1
        if isinstance(event, yaml.AliasEvent):
            raise _refuse(name, "YAML aliases (*name) are not supported; write the values out", line)
        if isinstance(event, (yaml.ScalarEvent, yaml.SequenceStartEvent, yaml.MappingStartEvent)):
            nodes += 1
            if nodes > MAX_NODES:
                raise _refuse(
                    name,
                    f"more than {MAX_NODES:,} values (the limit of a fleet or event file); is it the right file?",
                    line,
                )
            if depth == 1 and root_is_mapping:
                if key_next:
                    top_key = event.value if isinstance(event, yaml.ScalarEvent) else None
                    key_next = False
                else:
                    counting = limits.get(top_key) if isinstance(event, yaml.SequenceStartEvent) else None
                    items = 0
                    key_next = isinstance(event, yaml.ScalarEvent)
            elif depth == 2 and counting is not None:
                items += 1
                most, what = counting
                if items > most:
                    raise ConfigError(
                        [
                            Problem(
                                name,
                                line,
                                str(top_key),
                                f"more than {most:,} {what} (the limit, see FORMATS.md); split the file into parts of at most {most:,}",
                            )
                        ]
                    )
        if isinstance(event, (yaml.SequenceStartEvent, yaml.MappingStartEvent)):
            depth += 1
            if depth > MAX_NESTING:
                raise _refuse(
                    name,
                    f"lists and mappings nested more than {MAX_NESTING} deep (a fleet or event file needs about 5); is it the right file?",
                    line,
                )
            if depth == 1:
                root_is_mapping = isinstance(event, yaml.MappingStartEvent)
                key_next = True
        elif isinstance(event, (yaml.SequenceEndEvent, yaml.MappingEndEvent)):
            depth -= 1
            if depth == 1:
                key_next, counting = True, None


def load_yaml(path, limits: dict[str, tuple[int, str]] | None = None) -> yaml.Node:
    """Compose the YAML document of ``path`` into nodes (each with ``start_mark``).

    ``limits``: most entries of a top-level list, by key (see :func:`_scan`).
    """
    name = display_name(path)
    text = read_text(path)
    try:
        _scan(name, text, limits or {})
        node = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark is not None else None
        what = exc.problem or exc.context or "invalid YAML"
        raise _refuse(name, f"YAML syntax: {what}", line) from None
    except yaml.YAMLError as exc:
        raise _refuse(name, f"YAML syntax: {str(exc).splitlines()[0]}") from None
    except RecursionError:  # not expected after the nesting check; kept as a last guard
        raise _refuse(name, "nested too deeply to read; a fleet or event file needs about 5 levels") from None
    if node is None:
        raise _refuse(name, "the file is empty", 1)
    return node
