"""Writing output safely: never touch what the user wrote, all new or all old, the user's umask.

``carbfleet build --out DIR`` replaces a whole folder, so it must be sure the folder is its own:
a folder it wrote holds :data:`MANIFEST`, the list of every file it wrote. The build refuses an
empty path, the root, the home folder, the current folder or one holding it, the folder of an
input file or one holding it, a non-empty folder without the manifest, and a folder holding
anything the manifest does not list. ``carbfleet plan --out DIR`` writes three files into DIR
and nothing else; it writes them as one set (all new or all old) and overwrites only files that
are recognisably its own.

Files and folders get the permissions the user's umask gives (temporary files would be 0600).
"""

from __future__ import annotations

import contextlib
import errno
import json
import os
import tempfile
from collections.abc import Sequence
from functools import lru_cache
from pathlib import Path

from tuning import __version__
from tuning.errors import BuildError, UserError

__all__ = [
    "MANIFEST",
    "MANIFEST_FORMAT",
    "umask",
    "apply_umask",
    "safe_out_dir",
    "check_replaceable",
    "write_manifest",
    "write_file_set",
    "os_problem",
]

#: The marker file of an output folder written by ``carbfleet build`` (a list of what it wrote).
MANIFEST = "carbfleet-manifest.json"
MANIFEST_FORMAT = "carbfleet-output/1"


@lru_cache(maxsize=1)
def umask() -> int:
    """The process's umask (read once, in the main thread, before any worker starts)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def apply_umask(path: Path, folder: bool = False) -> None:
    """Give ``path`` the mode a plain ``open``/``mkdir`` would (0666/0777 less the umask)."""
    os.chmod(path, (0o777 if folder else 0o666) & ~umask())


def os_problem(option: str, path: Path, exc: OSError) -> UserError | BuildError:
    """One line for an operating-system error on an output path: a user error where the user
    can fix the path (a file in the way, no permission, read-only), a build failure otherwise."""
    what = {
        errno.EACCES: "permission denied; choose a folder you can write in",
        errno.EPERM: "permission denied; choose a folder you can write in",
        errno.EROFS: "the place is read-only; choose a writable folder",
        errno.ENOTDIR: "a part of the path is a file, not a folder; choose another path",
        errno.ENOENT: "a folder on the way does not exist and cannot be made here; check the path",
        errno.EEXIST: "a file of that name is in the way; choose another path",
        errno.ENAMETOOLONG: "the path is too long; choose a shorter one",
        errno.ENOSPC: "no space left on the disk; free some space and build again",
        errno.EDQUOT: "disk quota exceeded; free some space and build again",
    }.get(exc.errno)
    where = exc.filename or path
    if what is None:
        return BuildError(f"{option}: cannot write {where}: {exc.strerror or exc}")
    if exc.errno in (errno.ENOSPC, errno.EDQUOT):
        return BuildError(f"{option}: writing {where}: {what}; nothing was changed")
    return UserError(f"{option}: cannot write {where}: {what}")


def _inside_or_same(folder: Path, other: Path) -> bool:
    """True when ``other`` is ``folder`` or lies inside it."""
    return other == folder or folder in other.parents


def safe_out_dir(text: str, inputs: Sequence[str | Path] = (), option: str = "--out") -> Path:
    """Resolve the output folder of a build, refusing the places a build must never replace.

    Raises :class:`UserError` (one line) for an empty path, ``/``, the home folder, the current
    folder or a folder holding it, and the folder of any of ``inputs`` or a folder holding it.
    """
    if not str(text).strip():
        raise UserError(f"{option}: the path is empty (an unset shell variable?); name a new folder, e.g. {option} out")
    out = Path(os.path.expanduser(str(text))).resolve()
    shown = str(text)
    if out == Path(out.anchor):
        raise UserError(f"{option}: {shown} is the root folder; name a new folder for the output, e.g. {option} out")
    for folder, what in ((Path.cwd().resolve(), "the current folder"), (Path.home().resolve(), "your home folder")):
        if _inside_or_same(out, folder):
            holds = "is" if out == folder else "holds"
            raise UserError(
                f"{option}: {shown} {holds} {what}; the build replaces its whole output folder, "
                f"so name a new folder, e.g. {option} out"
            )
    for given in inputs:
        if not given:
            continue
        source = Path(given).resolve()
        if _inside_or_same(out, source.parent):
            raise UserError(
                f"{option}: {shown} holds the input file {given}; the build replaces its whole "
                f"output folder, so name a new folder, e.g. {option} {source.parent.name or 'out'}-out"
            )
    return out


def _listing(folder: Path) -> set[str]:
    """Every file and folder under ``folder``, as relative POSIX paths (folders end in '/')."""
    found = set()
    for path in folder.rglob("*"):
        rel = path.relative_to(folder).as_posix()
        found.add(rel + "/" if path.is_dir() and not path.is_symlink() else rel)
    return found


def check_replaceable(out: Path, option: str = "--out") -> None:
    """Refuse to replace ``out`` unless it is missing, empty, or holds only what a build wrote."""
    if not out.exists() and not out.is_symlink():
        return
    if out.is_symlink() or not out.is_dir():
        kind = "a link" if out.is_symlink() else "a file"
        raise UserError(f"{option}: {out} is {kind}, not a folder; name a new folder for the output")
    try:
        present = _listing(out)
    except OSError as exc:
        raise os_problem(option, out, exc) from None
    if not present:
        return
    listed = _manifest_files(out / MANIFEST)
    if listed is None:
        example = sorted(present)[0]
        raise UserError(
            f"{option}: {out} already holds files that carbfleet did not write (e.g. {example}) "
            f"and no {MANIFEST}; name a new or empty folder, or move those files away"
        )
    allowed = set(listed) | {MANIFEST}
    allowed |= {parent.as_posix() + "/" for name in listed for parent in Path(name).parents if str(parent) != "."}
    foreign = sorted(present - allowed)
    if foreign:
        raise UserError(
            f"{option}: {out} holds {foreign[0]}, which carbfleet did not write; "
            "move it out of the output folder (the build replaces the whole folder) or name another folder"
        )


def _manifest_files(path: Path) -> list[str] | None:
    """The files listed by a build's manifest, or ``None`` when there is no valid manifest."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(data, dict) or data.get("format") != MANIFEST_FORMAT or not isinstance(data.get("files"), list):
        return None
    return [name for name in data["files"] if isinstance(name, str)]


def write_manifest(folder: Path, event: str) -> Path:
    """Write :data:`MANIFEST` into ``folder``: every file below it, sorted, and the version."""
    files = sorted(name for name in _listing(folder) if not name.endswith("/") and name != MANIFEST)
    document = {"format": MANIFEST_FORMAT, "carbfleet_version": __version__, "event": event, "files": files}
    path = folder / MANIFEST
    path.write_text(json.dumps(document, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    return path


def _looks_like(path: Path, signature: str) -> bool:
    """True when the existing file ``path`` begins (within its first 4 KiB) with ``signature``."""
    try:
        with open(path, "rb") as handle:
            head = handle.read(4096).decode("utf-8", errors="replace")
    except OSError:
        return False
    return signature in head


def check_file_set(folder: Path, signatures: dict[str, str], option: str = "--out") -> None:
    """Refuse (one line) a ``folder`` that is a file, or whose files of the names in
    ``signatures`` exist without beginning with their signature (carbfleet did not write them)."""
    if folder.exists() and not folder.is_dir():
        raise UserError(f"{option}: {folder} is a file, not a folder; name a folder for the output")
    for parent in folder.parents:
        if parent.exists():
            if not parent.is_dir():
                raise UserError(f"{option}: {parent} is a file, so {folder} cannot be a folder; choose another path")
            break
    for name, signature in signatures.items():
        target = folder / name
        if (target.exists() or target.is_symlink()) and (
            target.is_symlink() or not target.is_file() or not _looks_like(target, signature)
        ):
            raise UserError(
                f"{option}: {target} exists and was not written by carbfleet; move it away or name another folder"
            )


def write_file_set(
    folder: Path, texts: dict[str, str], signatures: dict[str, str], option: str = "--out"
) -> list[Path]:
    """Write several text files into ``folder`` as one set: all new, or (on any failure) all old.

    Each text goes to a temporary file in the same folder first; only when every one is written
    and flushed to disk are they renamed into place (a rename needs no space). An existing file
    is overwritten only when its beginning holds its ``signatures`` entry, i.e. carbfleet wrote it.
    """
    check_file_set(folder, signatures, option)
    try:
        folder.mkdir(parents=True, exist_ok=True)  # mkdir honours the umask
    except OSError as exc:
        raise os_problem(option, folder, exc) from None
    temporary: list[Path] = []
    try:
        for name, text in texts.items():
            fd, tmp = tempfile.mkstemp(prefix=f".{name}.", suffix=".tmp", dir=folder)
            temporary.append(Path(tmp))
            with os.fdopen(fd, "w", encoding="utf-8", newline="") as handle:
                handle.write(text)
                handle.flush()
                os.fsync(handle.fileno())
            apply_umask(Path(tmp))
        for tmp, name in zip(temporary, texts):
            os.replace(tmp, folder / name)
    except OSError as exc:
        raise os_problem(option, folder, exc) from None
    finally:
        for tmp in temporary:
            with contextlib.suppress(OSError):
                tmp.unlink()
    return [folder / name for name in texts]
