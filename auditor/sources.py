"""Find the files to scan and read them as text (PEP 263 encodings, BOM), errors as data."""
from __future__ import annotations

import fnmatch
import io
import os
import stat
import sys
import tokenize
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path

from auditor.model import FileError

#: Folder names never descended into.
SKIP_DIRS = frozenset(
    {
        ".git", ".hg", ".svn", ".bzr", "__pycache__", ".mypy_cache", ".pytest_cache",
        ".ruff_cache", ".tox", ".nox", ".venv", "venv", ".eggs", "build", "dist",
        "node_modules", "site-packages", ".ipynb_checkpoints", ".hypothesis",
    }
)
#: File suffixes picked up when recursing a folder.
SUFFIXES = (".py", ".ipynb")
#: Files larger than this are reported, not parsed (a generated 5 MB module is fine).
MAX_BYTES = 32 * 1024 * 1024
STDIN = "-"


@dataclass(frozen=True, slots=True)
class SourceRef:
    """One file to scan: how to show it, and where to read it."""

    display: str  #: relative POSIX path used in reports ("<stdin>" for standard input)
    location: str  #: filesystem path, or "-" for standard input


@dataclass(frozen=True, slots=True)
class SourceText:
    ref: SourceRef
    text: str  #: decoded text, newlines kept as in the file


def _display(path: Path, base: Path) -> str:
    try:
        return path.relative_to(base).as_posix()
    except ValueError:
        return path.as_posix()


def _excluded(rel: str, patterns: Iterable[str]) -> bool:
    parts = rel.split("/")
    for pat in patterns:
        pat = pat.rstrip("/")
        if fnmatch.fnmatch(rel, pat) or fnmatch.fnmatch(rel, pat + "/*"):
            return True
        if "/" not in pat and any(fnmatch.fnmatch(p, pat) for p in parts):
            return True
    return False


def _is_venv(folder: Path) -> bool:
    return (folder / "pyvenv.cfg").is_file()


def discover(
    targets: Iterable[str], excludes: Iterable[str] = (), base: Path | None = None
) -> tuple[list[SourceRef], list[FileError]]:
    """Expand files and folders into a sorted, de-duplicated list of files to scan."""
    base = base or Path.cwd()
    excludes = tuple(excludes)
    refs: dict[str, SourceRef] = {}
    errors: list[FileError] = []
    for target in targets:
        if target == STDIN:
            refs[STDIN] = SourceRef("<stdin>", STDIN)
            continue
        path = Path(target)
        for ref_or_error in _expand(path, base, excludes, explicit=True, seen=set()):
            if isinstance(ref_or_error, FileError):
                errors.append(ref_or_error)
            else:
                refs.setdefault(ref_or_error.display, ref_or_error)
    return sorted(refs.values(), key=lambda r: r.display), errors


def _expand(
    path: Path, base: Path, excludes: tuple[str, ...], explicit: bool, seen: set[str]
) -> Iterator[SourceRef | FileError]:
    shown = _display(path.absolute(), base.absolute())
    if not explicit and _excluded(shown, excludes):
        return
    try:
        info = path.stat()
    except OSError as exc:
        yield FileError(shown, _stat_reason(path, exc))
        return
    if stat.S_ISDIR(info.st_mode):
        real = os.path.realpath(path)
        if real in seen:
            yield FileError(shown, "symbolic link loop: folder already visited")
            return
        if not explicit and (path.name in SKIP_DIRS or path.name.endswith(".egg-info") or _is_venv(path)):
            return
        seen = seen | {real}
        try:
            children = sorted(path.iterdir())
        except OSError as exc:
            yield FileError(shown, f"cannot list folder: {exc.strerror or exc}")
            return
        for child in children:
            if child.suffix in SUFFIXES or child.is_dir():
                yield from _expand(child, base, excludes, explicit=False, seen=seen)
    elif explicit or path.suffix in SUFFIXES:
        yield SourceRef(shown, str(path))


def _stat_reason(path: Path, exc: OSError) -> str:
    if path.is_symlink():
        if exc.errno == 40:  # ELOOP
            return "symbolic link loop"
        return "broken symbolic link (target does not exist)"
    if isinstance(exc, FileNotFoundError):
        return "no such file or folder"
    if isinstance(exc, PermissionError):
        return "permission denied"
    return f"cannot read: {exc.strerror or exc}"


def read_bytes(ref: SourceRef) -> bytes | FileError:
    """The raw bytes of a source, or why they could not be read."""
    if ref.location == STDIN:
        return sys.stdin.buffer.read()
    try:
        size = os.stat(ref.location).st_size
        if size > MAX_BYTES:
            return FileError(ref.display, f"file too large ({size / 2**20:.1f} MiB; limit {MAX_BYTES // 2**20} MiB)")
        with open(ref.location, "rb") as handle:
            return handle.read()
    except IsADirectoryError:
        return FileError(ref.display, "is a folder, not a file")
    except PermissionError:
        return FileError(ref.display, "permission denied")
    except OSError as exc:
        return FileError(ref.display, _stat_reason(Path(ref.location), exc))


def decode(ref: SourceRef, data: bytes) -> SourceText | FileError:
    """Decode Python source bytes honouring a BOM and a PEP 263 coding line."""
    if b"\0" in data[:8192]:
        return FileError(ref.display, "binary file (contains NUL bytes), not Python source")
    try:
        encoding, _ = tokenize.detect_encoding(io.BytesIO(data).readline)
    except SyntaxError as exc:
        if "invalid or missing" not in str(exc):
            return FileError(ref.display, f"bad coding line: {exc.msg}")
        encoding = "utf-8"  # no usable declaration: report where UTF-8 decoding fails
    try:
        text = data.decode(encoding)
    except (UnicodeDecodeError, LookupError) as exc:
        where = ""
        if isinstance(exc, UnicodeDecodeError):
            line_no = data[: exc.start].count(b"\n") + 1
            where = f" (line {line_no})"
        return FileError(ref.display, f"not valid {encoding} text{where}; declare the encoding with a PEP 263 coding line")
    if text.startswith("\ufeff"):
        text = text[1:]
    return SourceText(ref, text)


def read_source(ref: SourceRef) -> SourceText | FileError:
    data = read_bytes(ref)
    if isinstance(data, FileError):
        return data
    return decode(ref, data)
