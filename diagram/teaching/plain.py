"""Text brought to one plain form before the leak scan compares it (both sides alike).

Written apart from the scrubber (:mod:`diagram.teaching.scrub`) on purpose: the scan must not
miss exactly what the scrubber misses. :func:`plain` makes every spelling of a word that a
reader would take for the same word into the same ASCII letters:

- invisible format characters dropped: zero-width spaces and joiners, soft hyphens, direction
  marks and overrides (a right-to-left override shows "Page" written ``\\u202eegaP``);
- compatibility forms folded (NFKC): full-width letters, ligatures, mathematical letters;
- look-alike letters of other alphabets taken for the Latin letter they imitate (Cyrillic
  a, e, o, p, c, x; Greek capitals A, B, E, H, I, K, M, N, O, P, T, X …), then every other script
  transliterated
  (:mod:`anyascii`), accents dropped;
- the usual transliterations made equal: ü = ue = u, ö = oe = o, ä = æ = ae = a, ø = o,
  å = aa = a, ß = ss;
- lower case.

:func:`deleet` reads digits used for letters (``E11ison``), :func:`skeleton` keeps a word's
consonants (Muhammad and Mohamed both ``mhmd``).
"""

from __future__ import annotations

import re
import unicodedata
from functools import lru_cache

# Look-alike letters (after the Unicode confusables list, from memory): the Latin letter each
# imitates. Capitals first: a Greek capital Eta looks like H, its small form like n.
_LOOK_ALIKES = {
    **dict(
        zip(
            "\u0410\u0412\u0415\u041a\u041c\u041d\u041e\u0420\u0421\u0422\u0423\u0425\u0405\u0406\u0408\u050c",
            "ABEKMHOPCTYXSIJG",
            strict=True,
        )
    ),
    **dict(
        zip(
            "\u0430\u0435\u043e\u0440\u0441\u0443\u0445\u0455\u0456\u0458\u0501\u04bb\u051b\u051d\u04cf\u044c\u043f",
            "aeopcyxsijdhqwlbn",
            strict=True,
        )
    ),
    **dict(
        zip(
            "\u0391\u0392\u0395\u0396\u0397\u0399\u039a\u039c\u039d\u039f\u03a1\u03a4\u03a5\u03a7",
            "ABEZHIKMNOPTYX",
            strict=True,
        )
    ),
    **dict(
        zip(
            "\u03b1\u03b2\u03b5\u03b9\u03ba\u03bd\u03bf\u03c1\u03c4\u03c5\u03c7\u03c9",
            "abeikvoptuxw",
            strict=True,
        )
    ),
    **dict(zip("\u0251\u0261\u0269\u029f\u0280", "agilr", strict=True)),
}
_SPELLINGS = dict(zip("\u00f8\u00d8\u00e5\u00c5\u00e6\u00c6\u0153", "oOaAaAo", strict=True)) | {
    "\u00df": "ss"
}
_PAIRS = re.compile(r"(?<=[auo])e|(?<=a)a")  # ue ➜ u, oe ➜ o, ae ➜ a, aa ➜ a
_LEET = str.maketrans("013457890$@", "oleastbggsa")
_LEET_I = str.maketrans("1!|", "iii")
_VOWELS = re.compile(r"[aeiouy]+")
_LETTERS = re.compile(r"[^\W\d_]+")
_REPEATS = re.compile(r"(.)\1+")


@lru_cache(maxsize=4096)
def _char(ch: str) -> str:
    if unicodedata.category(ch) == "Cf":  # zero-width, direction controls, soft hyphen
        return ""
    ch = _LOOK_ALIKES.get(ch, ch)
    ch = _SPELLINGS.get(ch, ch)
    if ch.isascii():
        return ch
    from anyascii import anyascii

    text = unicodedata.normalize("NFKC", ch)
    if all(c.isascii() for c in text):
        return text
    spelled = anyascii(text)
    return spelled if spelled.strip() or not text.strip() else " "


def _word(m: re.Match[str]) -> str:
    """Return a word's plain reading; a word with no ASCII letter gets two: read by looks
    (a look-alike attack: Cyrillic "Раде" for Page) and transliterated (Иванова: Ivanova)."""
    word = m.group(0)
    looks = "".join(_char(c) for c in word)
    if any(c.isascii() for c in word):
        return looks
    from anyascii import anyascii

    spelled = anyascii(unicodedata.normalize("NFKC", word))
    return looks if spelled.lower() == looks.lower() else f"{looks} {spelled}"


def plain(text: str) -> str:
    """Return ``text`` in the scan's plain form (ASCII, lower case, transliterations equal)."""
    if not text.isascii():
        text = "".join(_char(c) for c in _LETTERS.sub(_word, text))
    return _PAIRS.sub("", text.lower())


def ideographs(text: str) -> str:
    """Return ``text`` in NFKC form, lower case, without invisible characters (CJK dates)."""
    kept = "".join(c for c in text if unicodedata.category(c) != "Cf")
    return unicodedata.normalize("NFKC", kept).lower()


def words(text: str) -> list[str]:
    """Return the letter-and-digit runs of a plain text."""
    return re.findall(r"[a-z0-9]+", text)


def squeeze(text: str) -> str:
    """Return the letters and digits of a plain text and nothing else."""
    return "".join(re.findall(r"[a-z0-9]+", text))


def deleet(word: str) -> tuple[str, ...]:
    """Return the readings of a word with digits standing for letters (none if it has none)."""
    if word.isalpha() or word.isdigit() or not any(c.isalpha() for c in word):
        return ()
    return tuple(dict.fromkeys((word.translate(_LEET), word.translate(_LEET_I).translate(_LEET))))


def skeleton(word: str) -> str:
    """Return a word's consonants with repeats merged: one spelling for many transliterations."""
    return _REPEATS.sub(r"\1", _VOWELS.sub("", word))


def spelled_runs(text: str) -> list[str]:
    """Return words written letter by letter ("b l a c k", "B.L.A.C.K"), joined up."""
    runs = re.findall(r"(?<![a-z0-9])(?:[a-z][\s.\-_*]{1,3}){3,}[a-z](?![a-z0-9])", text)
    return [re.sub(r"[^a-z]", "", run) for run in runs]
