"""Text made safe for each output format, in one place.

User text (site names, file paths, band names) reaches spreadsheets, XML
files (KML, SVG), JSON files and the terminal.  Each format has one
function here; :func:`safe_strings` applies one of them to every string of
a report before it is rendered (see :func:`profiler.io.outputs.write_outputs`).

=============  ==============================================================
format         what is done
=============  ==============================================================
every format   text that is not valid Unicode (lone surrogates, e.g. from a
               command-line argument that was not UTF-8) -> U+FFFD
``csv``        control characters (C0, DEL, C1) and bidirectional overrides
               written as visible escapes (``\\r``, ``\\x1b``, ``\\u202e``);
               a cell starting (after spaces) with ``= + - @`` gets a
               leading ``'`` so spreadsheets read it as text
``xml``        characters XML 1.0 forbids (C0 except tab/LF/CR, U+FFFE,
               U+FFFF) -> U+FFFD; markup is escaped by the XML writer
``figure``     as ``xml`` and tab/LF/CR -> space (one-line labels)
``terminal``   every control character and bidirectional override shown as
               an escape, so nothing the user typed can move the cursor,
               change colours or reorder the line
``json``       only the Unicode repair (JSON escapes control characters)
=============  ==============================================================

References
----------
.. [1] W3C, Extensible Markup Language (XML) 1.0 (Fifth Edition), section
   2.2 "Characters", production [2] Char.
.. [2] OWASP, "CSV Injection" (formula prefixes ``= + - @``, tab, CR).
.. [3] Unicode Standard Annex #9, explicit directional formatting
   characters (U+202A-U+202E, U+2066-U+2069).
"""

from __future__ import annotations

import re

__all__ = ["unicode_text", "csv_cell", "xml_text", "figure_text", "terminal_text", "json_text",
           "FORMATS", "safe_strings", "FORMULA_PREFIXES"]

FORMULA_PREFIXES = ("=", "+", "-", "@")
"""First characters (after leading spaces) that make spreadsheets read a cell as a formula [2]."""

_SURROGATE = re.compile("[\ud800-\udfff]")
# C0 controls, DEL, C1 controls, bidirectional embeddings/overrides/isolates [3].
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")
# XML 1.0 Char: #x9 | #xA | #xD | [#x20-#xD7FF] | [#xE000-#xFFFD] | [#x10000-#x10FFFF] [1].
_XML_FORBIDDEN = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")
_PLAIN = {float, int, bool, type(None)}
_NAMED = {"\t": "\\t", "\n": "\\n", "\r": "\\r"}


def unicode_text(text) -> str:
    """``text`` as a valid Unicode string: lone surrogates become U+FFFD (``None`` -> ``""``)."""
    s = "" if text is None else str(text)
    return _SURROGATE.sub("\ufffd", s) if _SURROGATE.search(s) else s


def _escape(match: re.Match) -> str:
    ch = match.group(0)
    if ch in _NAMED:
        return _NAMED[ch]
    code = ord(ch)
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def terminal_text(text) -> str:
    """Text for the terminal: control characters and direction overrides shown as escapes."""
    return _CONTROL.sub(_escape, unicode_text(text))


def csv_cell(text) -> str:
    """A spreadsheet-safe CSV text cell.

    Control characters become visible escapes (so no raw CR or LF can end a
    record for a reader that splits on them), then a cell whose first
    non-space character is ``= + - @`` gets a leading ``'`` (OWASP [2]).
    Idempotent: ``csv_cell(csv_cell(s)) == csv_cell(s)``.
    """
    s = terminal_text(text)
    return "'" + s if s.lstrip(" \u00a0").startswith(FORMULA_PREFIXES) else s


def xml_text(text) -> str:
    """Text that any XML 1.0 parser accepts: forbidden characters become U+FFFD [1]."""
    s = "" if text is None else str(text)
    return _XML_FORBIDDEN.sub("\ufffd", s)


def figure_text(text) -> str:
    """Text for a figure label (PNG, PDF, SVG): XML-safe and on one line."""
    return xml_text(text).replace("\t", " ").replace("\r", " ").replace("\n", " ")


def json_text(text) -> str:
    """Text for JSON (and GeoJSON): valid Unicode; ``json`` escapes control characters itself."""
    return unicode_text(text)


FORMATS = {"csv": csv_cell, "xml": xml_text, "figure": figure_text, "terminal": terminal_text,
           "json": json_text, "raw": None}
"""Format name -> the function :func:`safe_strings` applies (``raw``: none)."""


def safe_strings(obj, fmt: str):
    """A copy of ``obj`` (dicts, lists, tuples) with every string made safe for ``fmt``.

    Keys are kept; numbers, booleans and ``None`` are returned unchanged.
    """
    if fmt not in FORMATS:
        raise ValueError(f"unknown text format {fmt!r}; use one of {', '.join(FORMATS)}")
    fn = FORMATS[fmt]
    if fn is None:
        return obj

    def walk(x):
        if isinstance(x, str):
            return fn(x)
        if isinstance(x, dict):
            return {k: walk(v) for k, v in x.items()}
        if isinstance(x, (list, tuple)):
            if set(map(type, x)) <= _PLAIN:  # long numeric columns: one pass in C, no copy
                return x
            return type(x)(walk(v) for v in x)
        return x

    return walk(obj)
