"""Text output that survives a narrow output encoding (cp1252 on a Windows pipe, ascii, ...).

Every message of the tool is written with its real symbols (Δ, ±, →, —, °, µ, ², ≤ ...). When the
stream the text goes to cannot carry a symbol, :func:`narrow_streams` puts a thin wrapper in
front of ``sys.stdout``/``sys.stderr`` that spells it in ASCII instead (``ΔT`` → ``dT``,
``±`` → ``+/-``, ``→`` → ``->``, ``K⁻¹`` → ``K^-1``). Symbols the stream can carry are kept
(cp1252 has ±, °, µ, ², —). The messages themselves are never changed; this is the one place
that decides how they reach a narrow stream. JSON output is ASCII already (``json.dumps``
escapes everything else), so it is valid UTF-8 on any stream.

Standard library only: the click group's entry imports this on every run.
"""

from __future__ import annotations

import codecs
import contextlib
import io
import sys
import unicodedata
from collections.abc import Iterator
from typing import Any

ERRORS = "heatlog-ascii"

# How each symbol the tool prints is spelled in ASCII (words kept, symbols spelled out).
SPELLING: dict[str, str] = {
    "Δ": "d", "δ": "delta", "∂": "d", "±": "+/-", "∓": "-/+", "→": "->", "←": "<-", "↔": "<->",
    "—": "--", "–": "-", "−": "-", "‐": "-", "…": "...", "·": "*", "•": "*", "×": "x", "÷": "/",
    "°": "deg", "µ": "u", "μ": "u", "Ω": "ohm", "≈": "~", "≤": "<=", "≥": ">=", "≠": "!=",
    "∞": "inf", "√": "sqrt", "∫": "int", "Σ": "Sum", "½": "1/2", "¼": "1/4", "¾": "3/4",
    "‘": "'", "’": "'", "“": '"', "”": '"', "«": '"', "»": '"', "\u00a0": " ", "\u2009": " ",
    "\u202f": " ", "█": "#", "▌": "#", "░": ".", "▒": ":", "─": "-", "│": "|", "└": "+",
    "┌": "+", "├": "+", "┐": "+", "┘": "+", "✓": "ok", "✗": "x", "⚠": "!",
}  # fmt: skip
_SUPERSCRIPT = {
    "⁰": "0", "¹": "1", "²": "2", "³": "3", "⁴": "4", "⁵": "5", "⁶": "6", "⁷": "7", "⁸": "8",
    "⁹": "9", "⁺": "+", "⁻": "-", "ᵀ": "T", "ᵗ": "t", "ⁿ": "n",
}  # fmt: skip
_SUBSCRIPT = {chr(0x2080 + i): str(i) for i in range(10)} | {"ₙ": "n", "ᵢ": "i", "ⱼ": "j"}


def spell(ch: str, prev: str = "") -> str:
    """The ASCII spelling of one character (``prev`` is the character before it)."""
    if ch in SPELLING:
        return SPELLING[ch]
    if ch in _SUPERSCRIPT:
        return ("" if prev in _SUPERSCRIPT else "^") + _SUPERSCRIPT[ch]
    if ch in _SUBSCRIPT:
        return _SUBSCRIPT[ch]
    if unicodedata.combining(ch):
        return ""
    name = unicodedata.name(ch, "")
    if name.startswith("GREEK SMALL LETTER ") and " " not in name[19:]:
        return name[19:].lower()
    if name.startswith("GREEK CAPITAL LETTER ") and " " not in name[21:]:
        return name[21:].capitalize()
    plain = "".join(
        c for c in unicodedata.normalize("NFKD", ch) if not unicodedata.combining(c)
    )  # é -> e, ﬁ -> fi
    if plain and plain.isascii():
        return plain
    return "?"


def _handler(exc: UnicodeError) -> tuple[str, int]:
    if not isinstance(exc, UnicodeEncodeError):
        raise exc
    s = exc.object
    out = "".join(spell(s[i], s[i - 1] if i > 0 else "") for i in range(exc.start, exc.end))
    return out, exc.end


codecs.register_error(ERRORS, _handler)


def ascii_spelled(text: str, encoding: str = "ascii") -> str:
    """``text`` with every character ``encoding`` cannot carry spelled in ASCII."""
    return text.encode(encoding, ERRORS).decode(encoding)


def _is_unicode(encoding: str | None) -> bool:
    try:
        return codecs.lookup(encoding or "ascii").name in {"utf-8", "utf-16", "utf-32", "utf-8-sig"}
    except LookupError:
        return False


class SpellingStream(io.TextIOBase):
    """A text stream in front of another that spells what its encoding cannot carry.

    It exposes no ``buffer`` and refuses bytes: click would otherwise bypass it for an ASCII
    stream and write UTF-8 bytes underneath. Everything else (``isatty``, ``fileno``, ``flush``) is the wrapped
    stream's."""

    def __init__(self, stream: Any):
        super().__init__()
        self.stream = stream
        self._encoding = stream.encoding

    @property
    def encoding(self) -> str:  # type: ignore[override]
        return str(self._encoding)

    @property
    def errors(self) -> str:  # type: ignore[override]
        return ERRORS

    def writable(self) -> bool:
        return True

    def write(self, s: Any) -> int:
        if not isinstance(s, str):  # a text stream: click probes for a binary one this way
            raise TypeError(f"write() argument must be str, not {type(s).__name__}")
        self.stream.write(ascii_spelled(s, self._encoding))
        return len(s)

    def flush(self) -> None:
        self.stream.flush()

    def isatty(self) -> bool:
        return bool(self.stream.isatty())

    def fileno(self) -> int:
        return int(self.stream.fileno())

    def __getattr__(self, name: str) -> Any:
        if name == "buffer":
            raise AttributeError(name)
        return getattr(self.stream, name)


def _needs_spelling(stream: Any) -> bool:
    if stream is None or isinstance(stream, SpellingStream):
        return False
    enc = getattr(stream, "encoding", None)
    return isinstance(enc, str) and not _is_unicode(enc)


@contextlib.contextmanager
def narrow_streams() -> Iterator[None]:
    """While active, ``sys.stdout`` and ``sys.stderr`` spell in ASCII what they cannot carry."""
    saved = sys.stdout, sys.stderr
    if _needs_spelling(sys.stdout):
        sys.stdout = SpellingStream(sys.stdout)
    if _needs_spelling(sys.stderr):
        sys.stderr = SpellingStream(sys.stderr)
    try:
        yield
    finally:
        for s in (sys.stdout, sys.stderr):
            if isinstance(s, SpellingStream):
                with contextlib.suppress(Exception):
                    s.flush()
        sys.stdout, sys.stderr = saved
