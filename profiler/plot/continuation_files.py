"""The files of a sheet's continuation sheets (PNG or SVG): their names, titles and stale ones.

Kept apart from :mod:`profiler.plot.continuation` (which draws the sheets and
uses :mod:`profiler.plot.sheet`) so that :func:`profiler.plot.sheet.write_sheet`
can name the files without an import cycle.
"""

from __future__ import annotations

import os
from pathlib import Path


def continuation_path(target, k: int) -> Path:
    """Where sheet ``k`` (2, 3, ...) of a PNG or SVG ``NAME.png`` goes: ``NAME-k.png`` beside it."""
    target = Path(target)
    return target.with_name(f"{target.stem}-{k}{target.suffix}")


def continued_title(title: str, k: int, count: int) -> str:
    """The metadata title of continuation sheet ``k`` of ``count``; it marks the file as a continuation sheet."""
    return f"{title} (continued, sheet {k} of {count})"


#: Bytes every continuation file of a PNG or SVG carries in its metadata (:func:`continued_title`).
CONTINUED_MARK = b"(continued, sheet "


def stale_continuations(target, count: int) -> list[Path]:
    """Continuation files of an earlier run that the sheets written now (``count``) do not replace.

    Only files named exactly ``NAME-k.SUFFIX`` beside ``target`` with ``k`` above ``count`` and
    marked in their metadata as a continuation sheet (:data:`CONTINUED_MARK` in the first 64 KiB):
    a file of that name written otherwise is left alone.
    """
    import re

    target = Path(target)
    folder = target.parent if str(target.parent) else Path(".")
    pattern = re.compile(re.escape(target.stem) + r"-([1-9][0-9]*)" + re.escape(target.suffix))
    stale = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return []
    for entry in entries:
        match = pattern.fullmatch(entry.name)
        if not match or int(match.group(1)) <= max(count, 1) or not entry.is_file():
            continue
        try:
            with open(entry.path, "rb") as handle:
                marked = CONTINUED_MARK in handle.read(65536)
        except OSError:
            continue
        if marked:
            stale.append(Path(entry.path))
    return sorted(stale)
