"""Atomic file output: write to a temporary file, then rename into place.

A failed run never leaves a half-written report, figure or export behind.
"""

from __future__ import annotations

import contextlib
import os
import sys
import tempfile
from pathlib import Path
from typing import Iterator

from .errors import ProfilerError


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it to ``path`` on success.

    The temporary file keeps the target's suffix so that writers choosing a
    format by extension (matplotlib) see the right one.  On any exception the
    temporary file is removed and ``path`` is left untouched.
    """
    target = Path(path)
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise ProfilerError(
            f"cannot write {target}: folder {directory} does not exist; create it or choose another path"
        )
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=target.suffix or ".tmp", dir=directory)
    os.close(fd)
    tmp_path = Path(tmp)
    # mkstemp makes the file owner-only; give it the permissions a normal new file would get.
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp_path, 0o666 & ~umask)
    try:
        yield tmp_path
        os.replace(tmp_path, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp_path.unlink()
        raise


def write_text(path: str | os.PathLike, text: str) -> None:
    """Write ``text`` (UTF-8) to ``path`` atomically; ``-`` means standard output."""
    if str(path) == "-":
        sys.stdout.write(text)
        sys.stdout.flush()
        return
    with atomic_path(path) as tmp:
        try:
            tmp.write_text(text, encoding="utf-8", newline="")
        except OSError as exc:
            raise ProfilerError(f"cannot write {path}: {exc.strerror}") from exc


def write_bytes(path: str | os.PathLike, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically."""
    with atomic_path(path) as tmp:
        try:
            tmp.write_bytes(data)
        except OSError as exc:
            raise ProfilerError(f"cannot write {path}: {exc.strerror}") from exc


def check_output_path(path, suffixes: tuple[str, ...] | None = None, option: str = "output") -> None:
    """Refuse early an output path whose folder is missing or whose extension is wrong.

    Called before any computation so that a run never stops half-way through
    writing its outputs.  ``-`` (standard output) is always accepted.
    """
    if path is None or str(path) == "-":
        return
    target = Path(path)
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise ProfilerError(f"cannot write {target} ({option}): folder {directory} does not exist; create it first")
    if target.is_dir():
        raise ProfilerError(f"cannot write {target} ({option}): it is a folder; give a file name")
    if suffixes and target.suffix.lower() not in suffixes:
        raise ProfilerError(f"{option} {target}: unknown file type {target.suffix or '(none)'}; use {', '.join(suffixes)}")
