"""What a series key may be: one spelling per key, readable back at its own URL.

A key is normalised to Unicode NFC (so two spellings of "café" are one key), then refused
if it:

- is empty, longer than 200 characters, or starts or ends with white space;
- holds a control, format, private-use, surrogate or unassigned character (this covers the
  bidirectional overrides and isolates such as U+202E, and zero-width characters);
- has an empty, ``.`` or ``..`` path segment (``a//b``, ``/a``, ``a/../b``): its URL would
  name another resource;
- has a segment that is one of the API's own path words (:data:`RESERVED`): its URL would
  read as another route (``a/champion``, ``a/versions/2``);
- mixes Latin with Cyrillic or Greek letters inside one segment, the usual way a look-alike
  of another key is spelled (the mixed-script test of Unicode TS #39 in outline).

A key spelled wholly in another script can still read as a stored key (Cyrillic "раураӏ"
and Latin "paypal"): the store refuses a new key whose skeleton equals a stored key's
(:mod:`storage.series.skeleton`), with 409.
"""

from __future__ import annotations

import unicodedata

from service.limits import MAX_KEY_LENGTH

RESERVED = frozenset({"champion", "history", "versions", "monitoring", "observations",
                      "upload"})
_REFUSED_CATEGORIES = {"Cc", "Cf", "Co", "Cs", "Cn", "Zl", "Zp"}
_CONFUSABLE_SCRIPTS = {"LATIN", "CYRILLIC", "GREEK"}


class SeriesKeyError(ValueError):
    """A series key breaks a rule; the message says which."""


def normalised_key(key: str) -> str:
    """``key`` in NFC, checked against the rules above; raise :class:`SeriesKeyError`."""
    key = unicodedata.normalize("NFC", key)
    if not key or len(key) > MAX_KEY_LENGTH:
        raise SeriesKeyError(f"a series key has 1 to {MAX_KEY_LENGTH} characters")
    if key != key.strip():
        raise SeriesKeyError("a series key does not start or end with white space")
    for char in key:
        if unicodedata.category(char) in _REFUSED_CATEGORIES:
            raise SeriesKeyError(f"a series key may not hold the character U+{ord(char):04X} "
                                 "(control, format or bidirectional characters)")
    for segment in key.split("/"):
        if segment in ("", ".", ".."):
            raise SeriesKeyError("a series key has no empty, '.' or '..' path segment")
        if segment.lower() in RESERVED:
            words = ", ".join(sorted(RESERVED))
            raise SeriesKeyError(f"{segment!r} is a word of the API's paths and cannot be a "
                                 f"segment of a series key (reserved: {words})")
        scripts = {unicodedata.name(c, "").split(" ")[0] for c in segment if c.isalpha()}
        if len(scripts & _CONFUSABLE_SCRIPTS) > 1:
            raise SeriesKeyError(f"segment {segment!r} mixes Latin, Cyrillic or Greek letters, "
                                 "which makes look-alikes of other keys")
    return key
