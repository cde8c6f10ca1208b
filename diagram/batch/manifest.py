"""The batch manifest: which input became which file, kept in the output folder.

Batch output names carry no identifier (``map-0001.pdf``), so ``manifest.json`` beside them is
the record of which study each file shows, and of what failed and why. It is written atomically
when the batch starts (every study "not drawn"), again every few seconds while it runs, and at
the end, also after a failure or an interrupt. A folder drawn into again keeps the entries of
earlier batches whose files this batch does not write.
"""

from __future__ import annotations

import json
import os
import time
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from diagram._version import __version__
from diagram.batch.names import MANIFEST_NAME, Named, Unnamed
from diagram.errors import ExportError

MANIFEST_FORMAT = 1
REWRITE_SECONDS = 2.0  # at most this often while the batch runs


def read_manifest(out_dir: Path, *, overwrite: bool) -> list[dict[str, Any]]:
    """Return the study entries of an earlier manifest in ``out_dir`` (none if there is none).

    A file of that name that is not a manifest is refused unless ``overwrite``.
    """
    path = out_dir / MANIFEST_NAME
    try:
        doc = json.loads(path.read_text("utf-8"))
    except FileNotFoundError:
        return []
    except (OSError, ValueError):
        doc = None
    if isinstance(doc, dict) and doc.get("manifest_format") == MANIFEST_FORMAT:
        studies = doc.get("studies")
        if isinstance(studies, list):
            return [s for s in studies if isinstance(s, dict)]
    if overwrite:
        return []
    raise ExportError(
        f"{path}: exists and is not a limbchart batch manifest; it was left as it was "
        "(move it, or give --overwrite to replace it)."
    )


class Manifest:
    """The manifest of one batch, rewritten as results come in."""

    def __init__(
        self,
        out_dir: Path,
        named: Sequence[Named],
        formats: Sequence[str],
        earlier: Sequence[dict[str, Any]] = (),
    ) -> None:
        self.path = out_dir / MANIFEST_NAME
        self._planned = {i.n: [f"{i.stem}.{fmt}" for fmt in formats] for i in named}
        self._entries: dict[int, dict[str, Any]] = {
            i.n: _entry(i.study, "not drawn") for i in named
        }
        ours = {name for names in self._planned.values() for name in names}
        inputs = {e["input"] for e in self._entries.values()}
        self._earlier = [
            e
            for e in earlier
            if e.get("input") not in inputs and not ours.intersection(e.get("outputs") or ())
        ]
        self._written_at = 0.0

    def fail(self, item: Unnamed) -> None:
        """Note a study that failed before it was handed to be drawn."""
        self._entries[item.n] = _entry(item.study, "failed", errors=item.errors)

    def note(self, n: int, study: str, errors: Sequence[str]) -> None:
        """Note what became of study ``n``, and rewrite the file if it is a while since."""
        if errors:
            self._entries[n] = _entry(Path(study), "failed", errors=errors)
        else:
            self._entries[n] = _entry(Path(study), "drawn", outputs=self._planned.get(n, []))
        if time.monotonic() - self._written_at >= REWRITE_SECONDS:
            self.write("running")

    def write(self, status: str) -> Path:
        """Write the manifest atomically with the batch's ``status``; return its path."""
        from diagram.output.export import write_atomic

        studies = [self._entries[n] for n in sorted(self._entries)]
        counts = {
            key: sum(1 for e in studies if e["status"] == key)
            for key in ("drawn", "failed", "not drawn")
        }
        doc = {
            "manifest_format": MANIFEST_FORMAT,
            "tool": f"limbchart {__version__}",
            "batch": {"status": status, **{k.replace(" ", "_"): v for k, v in counts.items()}},
            "studies": [*self._earlier, *studies],
        }
        text = json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
        write_atomic(self.path, text.encode("utf-8", "backslashreplace"))
        self._written_at = time.monotonic()
        return self.path


def _entry(
    study: Path,
    status: str,
    *,
    outputs: Sequence[str] = (),
    errors: Sequence[str] = (),
) -> dict[str, Any]:
    return {
        "input": os.path.abspath(study),
        "outputs": list(outputs),
        "status": status,
        "errors": list(errors),
    }
