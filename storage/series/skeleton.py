"""Skeletons of series keys: one spelling for keys that look alike across scripts.

Unicode Technical Standard #39 (Security Mechanisms, section 4) calls two strings
confusable when their *skeletons* are equal: each character replaced by the prototype it is
visually confusable with. Foldline uses that idea with a small table of its own, limited to
the Cyrillic and Greek letters that look like Latin letters in common fonts (the letters
recalled from Unicode's confusables data, not the full data file). So "раураl" spelled in
Cyrillic and "paypal" in Latin share one skeleton, and only the first of them is stored.
Latin-internal look-alikes (``l``/``1``/``I``, ``O``/``0``) are not folded.
"""

from __future__ import annotations

import unicodedata

_CYRILLIC = {
    "а": "a", "с": "c", "ԁ": "d", "е": "e", "һ": "h", "і": "i", "ј": "j", "ӏ": "l",
    "о": "o", "р": "p", "ԛ": "q", "ѕ": "s", "ѵ": "v", "ԝ": "w", "х": "x", "у": "y",
    "ү": "y",
    "А": "A", "В": "B", "С": "C", "Е": "E", "Н": "H", "І": "I", "Ј": "J", "К": "K",
    "М": "M", "О": "O", "Р": "P", "Ѕ": "S", "Т": "T", "Х": "X", "У": "Y", "Ү": "Y",
    "Ԛ": "Q", "Ԝ": "W", "Ӏ": "I",
}
_GREEK = {
    "α": "a", "ι": "i", "ν": "v", "ο": "o", "ρ": "p", "υ": "u", "χ": "x", "γ": "y",
    "Α": "A", "Β": "B", "Ε": "E", "Ζ": "Z", "Η": "H", "Ι": "I", "Κ": "K", "Μ": "M",
    "Ν": "N", "Ο": "O", "Ρ": "P", "Τ": "T", "Υ": "Y", "Χ": "X",
}
#: the Cyrillic and Greek letters that read as Latin ones, by code point
LATIN_LOOKALIKES = str.maketrans(_CYRILLIC | _GREEK)


def skeleton(key: str) -> str:
    """The key with every look-alike letter replaced by the Latin letter it reads as
    (NFD before and after, as in UTS #39's skeleton)."""
    folded = unicodedata.normalize("NFD", key).translate(LATIN_LOOKALIKES)
    return unicodedata.normalize("NFD", folded)
