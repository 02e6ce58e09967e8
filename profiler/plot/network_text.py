"""Site names wrapped, never cut, for the network map and its side column.

:func:`wrap_label` breaks a name at spaces and, where a word is longer than
the line, inside the word, so that every character stays on the sheet;
:class:`TextMeasure` estimates widths from cached single-character widths
(fast for many long names) and the wrap checks each line with the renderer.
matplotlib is used only through the renderer passed in.
"""

from __future__ import annotations

import numpy as np

from .sheet import text_width_in

__all__ = ["TextMeasure", "wrap_label"]


class TextMeasure:
    """Drawn widths [in] of texts in the sheet font: :meth:`estimate` adds cached widths of single
    characters (fast, kerning ignored), :meth:`exact` asks the renderer."""

    def __init__(self, renderer):
        self.renderer = renderer
        self.chars = {}

    def estimate(self, s: str, size: float, bold: bool = False) -> float:
        for c in set(s) - self.chars.keys():
            self.chars[c] = text_width_in(self.renderer, c, 10.0, bold)     # scales with the size
        return sum(self.chars[c] for c in s) * size / 10.0

    def exact(self, s: str, size: float, bold: bool = False) -> float:
        return text_width_in(self.renderer, s, size, bold)


def _greedy_lines(name: str, width_in: float, measure, size: float, bold: bool) -> list[str]:
    """Words filled into lines of estimated width ``width_in`` [in]; a longer word broken inside."""
    lines, line = [], ""
    for word in name.split(" "):
        joined = f"{line} {word}" if line else word
        if measure.estimate(joined, size, bold) <= width_in:
            line = joined
            continue
        if line:
            lines.append(line)
        line = word
        while len(line) > 1 and measure.estimate(line, size, bold) > width_in:
            widths = np.cumsum([measure.estimate(c, size, bold) for c in line])
            cut = max(int(np.searchsorted(widths, width_in, side="right")), 1)
            lines.append(line[:cut])
            line = line[cut:]
    return lines + [line]


def wrap_label(name: str, max_width_in: float, renderer, size: float, bold: bool = False, *,
               measure: TextMeasure | None = None) -> str:
    """``name`` on lines at most ``max_width_in`` wide, broken at spaces, a word longer than the line
    broken inside; every character kept (never cut).  Each line is checked with the renderer."""
    measure = measure or TextMeasure(renderer)
    target = max_width_in
    for _ in range(10):
        lines = _greedy_lines(name, target, measure, size, bold)
        if all(measure.exact(line, size, bold) <= max_width_in for line in lines):
            break
        target *= 0.96
    return "\n".join(lines)
