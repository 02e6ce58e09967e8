"""Fitting text into a box without cutting it: wrap at spaces, then shrink, then report.

Every sheet text that may be long (names, verdicts, values, provenance) goes
through :func:`fit_text`: the text is broken at spaces (a word wider than the
box is broken between characters), the font shrinks in steps of 0.25 pt from
the size asked for down to a stated minimum (:data:`MIN_FONT_PT`, 5 pt
unless the caller says otherwise), and when even the minimum does not fit
the result says so (``Fitted.fits`` is False) so that the caller can move
the text elsewhere (another page) or raise :class:`LayoutOverflow`.  Nothing
is ever shortened or ellipsized.

Widths are measured by the renderer (each distinct word once per size,
cached in a :class:`Measure`): text layout is the slow part of drawing a
sheet, so a long text is measured word by word and its lines are summed,
then checked once.  Heights follow matplotlib's layout of a multi-line text:
``lines x linespacing x fontsize`` (:func:`text_height_in`).  matplotlib is
imported only inside functions.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass

__all__ = ["MIN_FONT_PT", "Fitted", "LayoutOverflow", "Measure", "fit_text", "wrap_lines", "text_height_in",
           "break_name", "largest_size", "wrap_chars"]

#: Smallest font [pt] any sheet text is shrunk to before it is reported as not fitting.
MIN_FONT_PT = 5.0

#: Font sizes are tried in steps of this [pt].
STEP_PT = 0.25


class LayoutOverflow(Exception):
    """A text or table does not fit its box even at the minimum font size (the caller may continue
    on another page)."""


@dataclass(frozen=True)
class Fitted:
    """A text laid out in a box.

    Attributes
    ----------
    lines : tuple of str
        The text, whole, broken into lines.
    fontsize : float
        Font size [pt] at which the lines fit (the minimum when they do not).
    width_in, height_in : float
        Widest line and the height of all lines [in].
    fits : bool
        False when even the minimum font size does not fit the box.
    """

    lines: tuple
    fontsize: float
    width_in: float
    height_in: float
    fits: bool

    @property
    def text(self) -> str:
        return "\n".join(self.lines)


def text_height_in(n_lines: int, fontsize: float, linespacing: float = 1.2) -> float:
    """Drawn height [in] of ``n_lines`` lines of text at ``fontsize`` [pt] (matplotlib's layout)."""
    return n_lines * linespacing * fontsize / 72.0


class Measure:
    """Drawn widths [in] of strings in the sheet font, measured once per size and weight.

    One layout of a whole string by the renderer's font gives the position
    of every character (``FT2Font.set_text``), so the width of any run of it
    (a line, a word, a piece of a word) is a difference of two positions:
    wrapping a long text costs one measurement per font size, not one per
    word (each measurement costs about half a millisecond).
    """

    def __init__(self, renderer):
        self.renderer = renderer
        self.cache: dict = {}

    def _font(self, fontsize, bold):
        from matplotlib.font_manager import FontProperties

        prop = FontProperties(family="sans-serif", size=fontsize, weight="bold" if bold else "normal")
        return self.renderer._prepare_font(prop), prop

    def positions(self, s: str, fontsize: float, bold: bool = False):
        """x [in] of the start of each character of ``s`` and, last, its whole width (``len(s) + 1``
        values); None when the font does not lay out one glyph per character."""
        key = (s, fontsize, bold, "x")
        if key in self.cache:
            return self.cache[key]
        try:
            x = self._positions(s, fontsize, bold)
        except (AttributeError, TypeError, ValueError):   # another renderer: measure whole strings
            x = None
        self.cache[key] = x
        if x is not None:
            self.cache[(s, fontsize, bold)] = float(x[-1])
        return x

    def _positions(self, s, fontsize, bold):
        """Character positions [in]; a text where the font joins characters into one glyph (a
        ligature such as "fi") is laid out in two halves split at a space, a single such word with
        its characters spread evenly over its width."""
        import numpy as np
        from matplotlib.backends.backend_agg import get_hinting_flag

        font, _ = self._font(fontsize, bold)
        xys = np.asarray(font.set_text(s, 0.0, flags=get_hinting_flag()), dtype=float).reshape(-1, 2)
        width = font.get_width_height()[0] / 64.0 / self.renderer.dpi
        if len(xys) == len(s):
            return np.append(xys[:, 0] / 64.0 / self.renderer.dpi, width)
        spaces = [i for i, c in enumerate(s) if c == " " and 0 < i]
        if not spaces:
            return np.linspace(0.0, width, len(s) + 1)
        k = min(spaces, key=lambda i: abs(i - len(s) // 2))
        left, right = self._positions(s[:k], fontsize, bold), self._positions(s[k:], fontsize, bold)
        return np.concatenate([left[:-1], left[-1] + right])

    def widest_word(self, s: str, fontsize: float, bold: bool = False) -> float:
        """Width [in] of the widest space-separated word of ``s``."""
        import re

        if " " not in s:
            return self(s, fontsize, bold)
        x = self.positions(s, fontsize, bold)
        if x is None:
            return max((self(w, fontsize, bold) for w in s.split()), default=0.0)
        return max((x[m.end()] - x[m.start()] for m in re.finditer(r"\S+", s)), default=0.0)

    def __call__(self, s: str, fontsize: float, bold: bool = False) -> float:
        if not s:
            return 0.0
        key = (s, fontsize, bold)
        width = self.cache.get(key)
        if width is None:
            if self.positions(s, fontsize, bold) is None:
                _, prop = self._font(fontsize, bold)
                self.cache[key] = (self.renderer.get_text_width_height_descent(s, prop, ismath=False)[0]
                                   / self.renderer.dpi)
            width = self.cache[key]
        return width


def break_name(word: str, room_in: float, measure, fontsize: float, bold: bool = False) -> list[str]:
    """A word wider than ``room_in`` [in] broken between characters into pieces that fit (never cut)."""
    pieces = []
    while word:
        if measure(word, fontsize, bold) <= room_in:
            pieces.append(word)
            break
        n = max(1, int(len(word) * room_in / measure(word, fontsize, bold)))
        while n > 1 and measure(word[:n], fontsize, bold) > room_in:
            n -= 1
        while n < len(word) and measure(word[:n + 1], fontsize, bold) <= room_in:
            n += 1
        pieces.append(word[:n])
        word = word[n:]
    return pieces


def wrap_lines(s: str, room_in: float, measure, fontsize: float, bold: bool = False) -> list[str]:
    """``s`` broken at spaces (and explicit newlines) into lines at most ``room_in`` [in] wide.

    A word wider than the room is broken between characters.  Each
    paragraph is measured once (:meth:`Measure.positions`); renderers
    without glyph positions measure word by word.
    """
    out = []
    room_in += 1e-6         # rounding: a box sized to its text + padding gives the text back exactly
    for para in s.split("\n"):
        if measure(para, fontsize, bold) <= room_in:
            out.append(para)
            continue
        x = measure.positions(para, fontsize, bold) if hasattr(measure, "positions") else None
        out.extend(_wrap_positions(para, x, room_in) if x is not None
                   else _wrap_words(para, room_in, measure, fontsize, bold))
    return out


def _wrap_positions(para: str, x, room_in: float) -> list[str]:
    """Greedy line breaking from character positions ``x`` [in] (widths of runs are differences)."""
    import re

    import numpy as np

    lines, start, end = [], None, None
    for m in re.finditer(r"\S+", para):
        a, b = m.start(), m.end()
        pieces = [(a, b)]
        if x[b] - x[a] > room_in:                      # a long word: between characters
            pieces, p = [], a
            while p < b:
                q = int(np.searchsorted(x, x[p] + room_in + 1e-9, side="right")) - 1
                q = min(b, max(q, p + 1))
                pieces.append((p, q))
                p = q
        for p, q in pieces:
            if start is not None and x[q] - x[start] <= room_in + 1e-9:
                end = q
                continue
            if start is not None:
                lines.append(para[start:end])
            start, end = p, q
    lines.append(para[start:end] if start is not None else "")
    return lines


def _wrap_words(para: str, room_in: float, measure, fontsize: float, bold: bool) -> list[str]:
    """Greedy line breaking measuring every candidate line (renderers without glyph positions)."""
    pieces = []
    for word in para.split():
        pieces.extend([word] if measure(word, fontsize, bold) <= room_in
                      else break_name(word, room_in, measure, fontsize, bold))
    lines, line = [], ""
    for piece in pieces:
        candidate = f"{line} {piece}" if line else piece
        if not line or measure(candidate, fontsize, bold) <= room_in:
            line = candidate
        else:
            lines.append(line)
            line = piece
    lines.append(line)
    return lines


def _balanced(s, lines, room_in, measure, fontsize, bold) -> list[str]:
    """The narrowest room that keeps the same number of lines (even lines, a narrower box)."""
    lo, hi = 0.9 * sum(measure(line, fontsize, bold) for line in lines) / len(lines), room_in
    best = lines
    for _ in range(8):
        if hi - lo < 0.02:
            break
        mid = 0.5 * (lo + hi)
        trial = wrap_lines(s, mid, measure, fontsize, bold)
        if len(trial) <= len(lines):
            best, hi = trial, mid
        else:
            lo = mid
    return best


def fit_text(s: str, room_in: float, measure, fontsize: float, *, min_fontsize: float = MIN_FONT_PT,
             max_lines: int | None = None, max_height_in: float | None = None, bold: bool = False,
             linespacing: float = 1.2, balance: bool = False) -> Fitted:
    """Lay ``s`` out within ``room_in`` [in] wide (and ``max_lines`` / ``max_height_in`` [in] high).

    Wrap at spaces at ``fontsize`` [pt]; when that is too many lines or too
    tall, use the largest size on the 0.25 pt steps down to ``min_fontsize``
    (default :data:`MIN_FONT_PT`, 5 pt) at which it fits (found by
    bisection: a few measurements).  Never cuts: when the minimum does not
    fit either, the minimum's layout is returned with ``fits=False``.

    Parameters
    ----------
    measure : Measure
        Width cache (one per sheet, or per table).
    balance : bool
        Even out the lines (narrowest box with the same number of lines).
    """
    def layout(size):
        lines = wrap_lines(s, room_in, measure, size, bold)
        height = text_height_in(len(lines), size, linespacing)
        ok = ((max_lines is None or len(lines) <= max_lines)
              and (max_height_in is None or height <= max_height_in + 1e-9))
        return lines, height, ok

    size, (lines, height, ok) = largest_size(layout, fontsize, min_fontsize)
    if balance and len(lines) > 1:
        lines = _balanced(s, lines, room_in, measure, size, bold)
    width = max(measure(line, size, bold) for line in lines)
    return Fitted(tuple(lines), size, width, height, bool(ok and width <= room_in + 1e-9))


def largest_size(layout, fontsize: float, min_fontsize: float):
    """``(size, layout(size))`` for the largest size on 0.25 pt steps from ``fontsize`` down to
    ``min_fontsize`` whose layout fits (``layout(size)[-1]`` true), by bisection; the minimum's when none."""
    result = layout(float(fontsize))
    if result[-1] or fontsize <= min_fontsize + 1e-9:
        return float(fontsize), result
    low = layout(float(min_fontsize))
    if not low[-1]:
        return float(min_fontsize), low
    lo, hi = 0, int(round((fontsize - min_fontsize) / STEP_PT))     # steps above the minimum: lo fits, hi not
    best = (float(min_fontsize), low)
    while hi - lo > 1:
        mid = (lo + hi) // 2
        size = min_fontsize + mid * STEP_PT
        trial = layout(size)
        if trial[-1]:
            lo, best = mid, (size, trial)
        else:
            hi = mid
    return best


def wrap_chars(name: str, max_chars: int) -> str:
    """``name`` broken onto lines of at most ``max_chars`` characters, at spaces where it can (never cut)."""
    if len(name) <= max_chars:
        return name
    return "\n".join(textwrap.wrap(name, width=max(1, max_chars), break_on_hyphens=False)) or name
