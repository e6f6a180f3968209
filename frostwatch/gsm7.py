"""The GSM 7-bit default alphabet of text messages (3GPP TS 23.038 section 6.2.1): what fits one
SMS of 160 characters without switching the whole message to UCS-2 (70 characters).

    septets("east START ...")      # length as a phone counts it (extension characters count 2)
    is_gsm7(text)                  # only characters of the basic set and its extension table
    to_gsm7("-0.2 °C – ok")        # '-0.2 C - ok': the usual look-alikes replaced, the rest dropped
    fit(text, 120)                 # cut at a word boundary, with "..." when it had to be cut

Pure functions, no I/O.
"""

from __future__ import annotations

SMS_SEPTETS = 160  # one message of the default alphabet (3GPP TS 23.038)

# the basic character set (TS 23.038 table 6.2.1), less ESC (0x1B), which only prefixes the extension
BASIC = frozenset(
    "@£$¥èéùìòÇ\nØø\rÅåΔ_ΦΓΛΩΠΨΣΘΞÆæßÉ !\"#¤%&'()*+,-./0123456789:;<=>?"
    "¡ABCDEFGHIJKLMNOPQRSTUVWXYZÄÖÑÜ§¿abcdefghijklmnopqrstuvwxyzäöñüà"
)
# the extension table (TS 23.038 table 6.2.1.1): each costs two septets (ESC + the character)
EXTENSION = frozenset("\f^{}\\[~]|€")

# look-alikes outside the alphabet, as a person would write them on a phone
_REPLACE = {
    "°": "", "º": "", "–": "-", "—": "-", "−": "-", "‐": "-", "‑": "-", "‘": "'", "’": "'", "‚": ",",
    "“": '"', "”": '"', "„": '"', "…": "...", "±": "+/-", "×": "x", "·": "-", "•": "-", "²": "2", "³": "3",
    "\u00a0": " ", "\u2009": " ", "\u202f": " ", "µ": "u", "≈": "~", "≤": "<=", "≥": ">=", "→": "->", "½": "1/2",
    "á": "a", "â": "a", "ã": "a", "ç": "c", "ê": "e", "ë": "e", "í": "i", "î": "i", "ï": "i", "ó": "o", "ô": "o",
    "õ": "o", "ú": "u", "û": "u", "ý": "y", "Á": "A", "Â": "A", "È": "E", "Ê": "E", "Í": "I", "Ó": "O", "Ú": "U",
}


def septets(text: str) -> int:
    """The length of `text` in septets (extension characters count two).

    Raises ValueError naming the first character outside the GSM 7-bit alphabet.
    """
    n = 0
    for ch in text:
        if ch in BASIC:
            n += 1
        elif ch in EXTENSION:
            n += 2
        else:
            raise ValueError(f"{ch!r} (U+{ord(ch):04X}) is not in the GSM 7-bit alphabet")
    return n


def is_gsm7(text: str) -> bool:
    """True when every character is in the basic set or its extension table."""
    return all(ch in BASIC or ch in EXTENSION for ch in text)


def to_gsm7(text: str) -> str:
    """`text` in the GSM 7-bit alphabet: look-alikes replaced ("°" dropped, dashes and quotes made
    plain, "±" as "+/-"), anything else left out; runs of spaces made one."""
    out = []
    for ch in text:
        if ch in BASIC or ch in EXTENSION:
            out.append(ch)
        elif ch in _REPLACE:
            out.append(_REPLACE[ch])
    return " ".join("".join(out).split(" ")).replace("  ", " ")


def fit(text: str, limit: int) -> str:
    """`text` cut to at most `limit` septets at a word boundary, ending "..." when cut."""
    if septets(text) <= limit:
        return text
    room = max(0, limit - 3)
    cut = ""
    for word in text.split(" "):
        candidate = f"{cut} {word}" if cut else word
        if septets(candidate) > room:
            break
        cut = candidate
    if not cut:  # one long word: cut inside it
        cut = text[:room]
        while septets(cut) > room:
            cut = cut[:-1]
    return cut.rstrip(" ,;:-") + "..."
