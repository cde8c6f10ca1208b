"""Say what is wrong with a file that cannot be read as a study, in words a user can act on.

Pure functions from the file's bytes (or text) and the parser's complaint to one rule and a
hint: a word-processor document, a file saved as UTF-16 or Latin-1, a tab in YAML indentation,
a trailing comma in JSON. The readers call them where parsing fails; nothing here reads files.
"""

from __future__ import annotations

from dataclasses import dataclass

SAVE_AS_TEXT = (
    "save it from the word processor as plain text (.txt), then rename it to .yaml or .json"
)


@dataclass(frozen=True)
class Diagnosis:
    """Why a file cannot be read: the rule, the line it applies to, and what to do."""

    rule: str
    line: int | None = None
    hint: str | None = None


# (leading bytes, what the file is): formats a study is often saved in by mistake
_DOCUMENTS: tuple[tuple[bytes, str], ...] = (
    (b"{\\rtf", "a rich-text (RTF) document"),
    (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", "a Word 97-2003 (.doc) or other Office document"),
    (b"%PDF-", "a PDF document"),
)


def document_kind(data: bytes) -> str | None:
    """Return what kind of document ``data`` is, when it is a word processor's and not text."""
    for magic, kind in _DOCUMENTS:
        if data.startswith(magic):
            return kind
    if data.startswith(b"PK\x03\x04"):  # a zip archive: an Office Open XML or OpenDocument file
        head = data[:4096]
        if b"word/" in head:
            return "a Word (.docx) document"
        if b"opendocument.text" in head:
            return "an OpenDocument text (.odt) document"
        if b"xl/" in head or b"opendocument.spreadsheet" in head:
            return "a spreadsheet"
        return "a zip archive"
    return None


def not_a_text_file(data: bytes) -> Diagnosis | None:
    """Return why ``data`` is not a UTF-8 text file: a document, UTF-16 or UTF-32 text."""
    kind = document_kind(data)
    if kind is not None:
        return Diagnosis(f"is {kind}, not a YAML or JSON study.", 1, SAVE_AS_TEXT)
    encoding = _utf16_or_32(data)
    if encoding is not None:
        return Diagnosis(
            f"is not UTF-8 text: it looks like {encoding}.",
            1,
            "open it in a text editor and save it with the encoding UTF-8",
        )
    return None


def _utf16_or_32(data: bytes) -> str | None:
    boms = (
        (b"\xff\xfe\x00\x00", "UTF-32"),
        (b"\x00\x00\xfe\xff", "UTF-32"),
        (b"\xff\xfe", "UTF-16"),
        (b"\xfe\xff", "UTF-16"),
    )
    for bom, name in boms:
        if data.startswith(bom):
            return name
    head = data[:200]
    if len(head) >= 4:  # no byte-order mark: ASCII text in UTF-16 has every other byte NUL
        for zeros, text in ((head[1::2], head[0::2]), (head[0::2], head[1::2])):
            printable = sum(1 for b in text if 32 <= b < 127 or b in (9, 10, 13))
            if zeros.count(0) > len(zeros) * 0.8 and printable > len(text) * 0.8:
                return "UTF-16"
    return None


def not_utf8(data: bytes, start: int) -> Diagnosis:
    """Return the diagnosis of bytes that are not UTF-8, the first bad one at ``start``."""
    line = data.count(b"\n", 0, start) + 1
    byte = data[start]
    try:
        data.decode("cp1252")
        looks = "Windows-1252 or Latin-1 (ISO 8859-1)"
    except UnicodeDecodeError:
        looks = "Latin-1 (ISO 8859-1)"
    return Diagnosis(
        f"is not UTF-8 text (byte 0x{byte:02x}); it looks like {looks}.",
        line,
        "open it in a text editor and save it with the encoding UTF-8",
    )


def yaml_hint(text: str, line: int | None, column: int | None) -> Diagnosis | None:
    """Return a plainer diagnosis of a YAML error at ``line`` (1-based), or None."""
    if line is None:
        return None
    lines = text.splitlines()
    near = lines[max(0, line - 2) : line]  # the line the parser stopped on, and the one before
    for offset, content in enumerate(reversed(near)):
        indent = content[: len(content) - len(content.lstrip(" \t"))]
        if "\t" in indent:
            return Diagnosis(
                "is not valid YAML: a tab indents this line.",
                line - offset,
                "indent with spaces; YAML does not allow tabs for indentation",
            )
    return None


def json_hint(text: str, position: int) -> Diagnosis | None:
    """Return a plainer diagnosis of a JSON error at character ``position``, or None.

    A trailing comma (``[1, 2,]`` or ``{"a": 1,}``) is reported at the comma's line, which
    is where it is to be removed; the parser stops on the bracket after it.
    """
    before = text[:position].rstrip()
    after = text[position:].lstrip()
    if before.endswith(",") and after[:1] in ("}", "]"):
        comma = len(before) - 1
        closing = "object" if after[0] == "}" else "list"
        return Diagnosis(
            f"is not valid JSON: a comma after the last item of the {closing}.",
            text.count("\n", 0, comma) + 1,
            "remove the trailing comma; JSON does not allow one",
        )
    return None
