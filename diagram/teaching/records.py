"""The records a teaching export keeps: the audit, the optional link file, the review list.

- ``audit.json`` in the output folder: per run the settings, per case the kinds of identifier
  removed and the counts of scrubs and withheld texts, never a value. A folder that already holds
  a teaching set is refused unless the cases are added to it on purpose; then the folder's files
  must agree with its audit, and the new run is appended, so the audit stays one record.
- The link file (case id ➜ source file), only when asked for, never in the output folder.
- The review list, when free text is kept: every kept text with its case and field, for a person
  to read and sign off before the cases are released. Never in the output folder (it travels
  only after the review).
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from diagram.errors import ExportError

AUDIT_NAME = "audit.json"
AUDIT_FORMAT = 2
_CASE_PREFIX = "tc-"


def _load_audit(path: Path) -> dict[str, Any]:
    try:
        doc = json.loads(path.read_text("utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError):
        doc = None
    if not isinstance(doc, dict) or doc.get("audit_format") not in (1, AUDIT_FORMAT):
        raise ExportError(f"{path}: is not a limbchart teaching audit file; not touching it.")
    cases = doc.get("cases")
    if not isinstance(cases, list) or not all(isinstance(c, dict) for c in cases):
        raise ExportError(f"{path}: its list of cases is not readable; not touching it.")
    if doc["audit_format"] == 1:  # one run, its settings not recorded
        doc["runs"] = [{"run": 1}]
        for case in cases:
            case.setdefault("run", 1)
    return doc


def read_audit(out_dir: Path, *, add: bool) -> dict[str, Any]:
    """Return the folder's audit (empty when there is none); refuse a teaching set not to add to.

    A folder with an audit or any case file holds a teaching set: without ``add`` it is refused.
    With ``add`` its case files must be exactly those the audit lists as written.
    """
    path = out_dir / AUDIT_NAME
    files = sorted(p.name for p in out_dir.iterdir() if p.name.startswith(_CASE_PREFIX))
    if not path.exists():
        if files:
            raise ExportError(
                f"{out_dir}: holds teaching case files but no {AUDIT_NAME}; give a new folder."
            )
        return {"runs": [], "cases": []}
    doc = _load_audit(path)
    if not add:
        count = len(doc["cases"])
        raise ExportError(
            f"{out_dir}: holds a teaching set already ({count} case{'' if count == 1 else 's'} "
            f"in its {AUDIT_NAME}); give a new folder, or --add to add these cases to it."
        )
    listed = sorted(
        name for case in doc["cases"] if case.get("status") == "written" for name in case["outputs"]
    )
    if listed != files:
        raise ExportError(
            f"{out_dir}: its case files and its {AUDIT_NAME} do not agree (files changed by "
            "hand or a run cut short); nothing added. Give a new folder."
        )
    return doc


def write_audit(
    out_dir: Path, earlier: Mapping[str, Any], run: Mapping[str, Any], cases: list[dict[str, Any]]
) -> Path:
    """Write the audit: the earlier runs and cases, then this run and its cases."""
    from diagram._version import __version__
    from diagram.output.export import write_atomic

    number = len(earlier.get("runs", [])) + 1
    doc = {
        "audit_format": AUDIT_FORMAT,
        "tool": f"limbchart {__version__}",
        "note": "categories and counts only: no identifier, no source file, no date",
        "runs": [*earlier.get("runs", []), {"run": number, **run, "cases": len(cases)}],
        "cases": [*earlier.get("cases", []), *({**c, "run": number} for c in cases)],
    }
    path = out_dir / AUDIT_NAME
    write_atomic(path, (json.dumps(doc, indent=2) + "\n").encode("utf-8"))
    return path


def check_apart(path: Path, out_dir: Path, what: str, *, append: bool = False) -> None:
    """Refuse a link file or review list inside the output folder, or one that exists."""
    target, folder = path.resolve(), out_dir.resolve()
    if target == folder or target.is_relative_to(folder):
        raise ExportError(
            f"{path}: the {what} must not be inside the output folder {out_dir}: it would "
            "travel with the teaching cases; keep it apart, inside the hospital."
        )
    if path.exists() and not append:
        raise ExportError(f"{path}: exists; a {what} is never overwritten, give a new name.")
    if not path.parent.is_dir():
        raise ExportError(f"{path}: the folder {path.parent} does not exist.")


def default_review_list(out_dir: Path) -> Path:
    """Return where the review list goes when not named: beside the output folder."""
    folder = out_dir.resolve()
    return folder.parent / f"{folder.name}-free-text-review.txt"


def write_link(link: Path, rows: Iterable[tuple[str, Path]]) -> Path:
    """Write case id ➜ source file (tab-separated) for the cases written."""
    from diagram.output.export import write_atomic

    lines = ["# case id\tsource study file (keep this file apart from the teaching cases)"]
    lines.extend(f"{case}\t{source.resolve()}" for case, source in rows)
    write_atomic(link, ("\n".join(lines) + "\n").encode("utf-8"))
    return link


_REVIEW_HEAD = (
    "# limbchart teach: free text kept in the teaching cases of {folder}",
    "# Each text below was scrubbed of the study's identifiers and passed the leak scan. A scan",
    "# cannot know everything a person knows: before the cases leave the hospital, read every",
    "# line, edit or remove any text that could still identify the patient (HIPAA Safe Harbor,",
    "# 45 CFR 164.514(b)(2)(ii): no actual knowledge that what remains could identify), and sign.",
    "# case id\tfield\ttext",
)
_SIGN = "# Reviewed and released by: ______________________  Date: ____________"


def _cell(text: str) -> str:
    return text.replace("\\", "\\\\").replace("\t", "\\t").replace("\r", "\\r").replace("\n", "\\n")


def write_review_list(
    path: Path, out_dir: Path, run: int, rows: Iterable[tuple[str, str, str]]
) -> Path:
    """Write (or, for an added run, extend) the review list: case id, field and kept text."""
    from diagram.output.export import write_atomic

    old = path.read_text("utf-8").rstrip("\n").splitlines() if path.exists() else []
    lines = old or [line.format(folder=out_dir) for line in _REVIEW_HEAD]
    lines.append(f"# run {run}")
    lines.extend(f"{case}\t{field}\t{_cell(text)}" for case, field, text in rows)
    lines.append(_SIGN)
    write_atomic(path, ("\n".join(lines) + "\n").encode("utf-8"))
    return path
