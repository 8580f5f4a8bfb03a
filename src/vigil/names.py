"""Names of targets and sites: one form per name, nothing invisible that tells two apart.

A name is read as Unicode NFC (so a letter typed precomposed or with a combining accent is the
same name), without surrounding white space. It is refused when it has no visible character,
or holds a control character (C0, C1, DEL), a line or paragraph separator, or an invisible
format character such as a bidirectional mark, embedding, override or isolate (U+200E,
U+200F, U+202A-U+202E, U+2066-U+2069, U+061C), a zero-width space or a byte-order mark:
such names print like another name, or reorder the text around them. The zero-width
joiner and non-joiner (U+200C, U+200D), which some scripts need inside words, are allowed.
"""

from __future__ import annotations

import unicodedata

from vigil.errors import InputError

_JOINERS = {"\u200c", "\u200d"}
_REFUSED_CATEGORIES = {"Cc", "Cf", "Zl", "Zp", "Cs", "Cn"}


def clean_name(text: str, where: str) -> str:
    """`text` as a name (NFC, stripped); InputError starting with `where` when it is not one.

    Parameters
    ----------
    text : str
        The name as given.
    where : str
        The start of an error message: file, line and field, or the option.

    Examples
    --------
    >>> clean_name("  Orla-e\\u0301 b ", "targets.csv: line 2, field name") == "Orla-\\u00e9 b"
    True
    """
    name = unicodedata.normalize("NFC", text).strip()
    bad = next((c for c in name if unicodedata.category(c) in _REFUSED_CATEGORIES and c not in _JOINERS), None)
    if bad is not None:
        label = unicodedata.name(bad, "unnamed character")
        raise InputError(f"{where}: the name {name!r} holds the invisible or control character U+{ord(bad):04X} "
                         f"({label}) at position {name.index(bad) + 1}; expected a name of visible characters")
    if not any(not c.isspace() and c not in _JOINERS for c in name):
        got = f"{text!r}, which has no visible character" if text else "nothing"
        raise InputError(f"{where}: expected a name, got {got}")
    return name
