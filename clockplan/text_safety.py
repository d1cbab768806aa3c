"""Text from a scenario or a command line, made safe to show: control characters escaped,
long values cut, odd characters named.

A title holding ``ESC ] 0 ; … BEL`` would retitle the user's terminal, and a name of
megabytes would fill it; every output that echoes the user's text goes through here.
"""

from __future__ import annotations

import unicodedata

__all__ = ["printable", "shorten", "quoted", "describe_character", "first_odd_character"]

_UNSAFE_CATEGORIES = frozenset({"Cc", "Cf", "Cs", "Zl", "Zp"})
"""Controls, invisible format characters (bidi overrides, zero-width spaces), surrogates,
and the line and paragraph separators: each can move, hide or break what follows."""

MAX_QUOTED = 60
"""The most characters of a user's value an error message quotes."""


_NAMED_ESCAPES = {"\n": "\\n", "\t": "\\t", "\r": "\\r"}


def _escape(character: str) -> str:
    """One character as Python would escape it in a string literal."""
    if character in _NAMED_ESCAPES:
        return _NAMED_ESCAPES[character]
    code = ord(character)
    if code < 0x100:
        return f"\\x{code:02x}"
    return f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}"


def printable(text: str) -> str:
    """``text`` with every control or invisible format character written as an escape
    (``\\x1b``, ``\\n``, ``\\u202e``), so it shows as it is and changes no terminal."""
    if text.isascii() and text.isprintable():
        return text
    return "".join(
        _escape(character) if unicodedata.category(character) in _UNSAFE_CATEGORIES else character
        for character in text
    )


def shorten(text: str, limit: int = MAX_QUOTED) -> str:
    """``text`` cut to ``limit`` characters, with "…" and the full length when cut."""
    if len(text) <= limit:
        return text
    return f"{text[: limit - 1]}… ({len(text)} characters)"


def quoted(value: object, limit: int = MAX_QUOTED) -> str:
    """A user's value as an error message quotes it: ``repr``, escaped and cut to a line."""
    if isinstance(value, str):
        return printable(repr(shorten(value, limit)))
    return printable(shorten(repr(value), limit))


def describe_character(character: str) -> str:
    """``U+041C CYRILLIC CAPITAL LETTER EM``: a character by code point and Unicode name."""
    name = unicodedata.name(character, "")
    if not name and unicodedata.category(character) == "Cc":
        name = "(a control character)"
    return f"U+{ord(character):04X} {name}".rstrip()


def first_odd_character(text: str) -> str | None:
    """The first character of ``text`` that is not printable ASCII, or None."""
    return next((c for c in text if not (c.isascii() and c.isprintable())), None)
