"""The export stage: write a drawing as SVG, PDF, PNG or JSON, atomically.

One ``export()`` with a registry of writers keyed by format; the format comes from the output
suffix unless given. Every write goes to a temporary file in the destination folder and is renamed
into place only when complete, so a failed run leaves no partial file and an existing output is
replaced only by a complete new one. CairoSVG runs in its safe mode (``unsafe=False``): it never
fetches anything but ``data:`` URLs.
"""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Callable
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Any

from diagram.errors import ExportError

if TYPE_CHECKING:
    from diagram.dicom import DicomIdentity
    from diagram.study import Study


@dataclass(frozen=True)
class Drawing:
    """What the pipeline produced for one study: the SVG text and the results document.

    ``study`` gives the DICOM header its patient and exam attributes; ``dicom`` overrides them
    (the teaching export passes de-identified ones).
    """

    svg: str
    results: dict[str, Any]
    study: Study | None = None
    dicom: DicomIdentity | None = None


@dataclass(frozen=True)
class ExportOptions:
    """Format-specific settings."""

    png_dpi: float = 150.0


Writer = Callable[[Drawing, ExportOptions], bytes]


def _use_shipped_fonts() -> None:
    """Point fontconfig at the package's fonts before cairo first looks a font up.

    The label layout measures text with the shipped DejaVu Sans; rendering with the same file
    keeps the PDF and PNG text exactly as wide as the layout assumed.
    """
    if "FONTCONFIG_FILE" not in os.environ:
        conf = resources.files("diagram") / "fonts" / "fonts.conf"
        os.environ["FONTCONFIG_FILE"] = str(conf)


def _cairosvg() -> Any:
    _use_shipped_fonts()
    try:
        import cairosvg
    except OSError as exc:  # the Python package is there but the system cairo library is not
        raise ExportError(
            f"PDF and PNG output need the cairo library ({exc}); install it, e.g. "
            "'apt-get install -y libcairo2'."
        ) from None
    return cairosvg


def _svg(drawing: Drawing, options: ExportOptions) -> bytes:
    return drawing.svg.encode("utf-8")


def _pdf(drawing: Drawing, options: ExportOptions) -> bytes:
    data: bytes = _cairosvg().svg2pdf(bytestring=drawing.svg.encode("utf-8"), unsafe=False)
    return data


def _png(drawing: Drawing, options: ExportOptions) -> bytes:
    data: bytes = _cairosvg().svg2png(
        bytestring=drawing.svg.encode("utf-8"),
        unsafe=False,
        dpi=options.png_dpi,
        background_color="white",
    )
    return data


def _dcm(drawing: Drawing, options: ExportOptions) -> bytes:
    from diagram._version import __version__
    from diagram.dicom import DicomIdentity, encapsulated_pdf, identity_from_study

    if drawing.dicom is not None:
        ident = drawing.dicom
    elif drawing.study is not None:
        ident = identity_from_study(drawing.study)
    else:
        ident = DicomIdentity()
    return encapsulated_pdf(_pdf(drawing, options), ident, version=__version__)


def _json(drawing: Drawing, options: ExportOptions) -> bytes:
    return (
        json.dumps(drawing.results, indent=2, sort_keys=False, ensure_ascii=False) + "\n"
    ).encode("utf-8")


WRITERS: dict[str, Writer] = {
    "svg": _svg,
    "pdf": _pdf,
    "png": _png,
    "dcm": _dcm,
    "json": _json,
}
FORMATS: tuple[str, ...] = tuple(WRITERS)


def format_for(path: Path, forced: str | None = None) -> str:
    """Return the output format: ``forced`` if given, else the path's suffix."""
    fmt = (forced or path.suffix.lstrip(".")).lower()
    if fmt not in WRITERS:
        shown = forced if forced else (path.suffix or "(no suffix)")
        raise ExportError(
            f"{path}: output format {shown!r} is not one of {', '.join(FORMATS)}; "
            "give a suffix such as .pdf or use --format."
        )
    return fmt


def render_bytes(drawing: Drawing, fmt: str, options: ExportOptions | None = None) -> bytes:
    """Return the drawing encoded in one format, without writing anything."""
    return WRITERS[fmt](drawing, options or ExportOptions())


def write_atomic(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file and a rename."""
    folder = path.parent if str(path.parent) else Path(".")
    if path.is_dir():
        raise ExportError(f"{path}: is a folder; give a file name such as {path / 'map.pdf'}.")
    if not folder.is_dir():
        raise ExportError(f"{path}: the folder {folder} does not exist.")
    tmp_name = None
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=folder)
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        os.chmod(tmp_name, 0o644)
        os.replace(tmp_name, path)
        tmp_name = None
    except OSError as exc:
        raise ExportError(f"{path}: cannot be written: {exc.strerror or exc}.") from None
    finally:
        if tmp_name is not None and os.path.exists(tmp_name):
            os.unlink(tmp_name)


def export(
    drawing: Drawing, path: str | Path, fmt: str | None = None, options: ExportOptions | None = None
) -> Path:
    """Write the drawing to ``path`` in its format; return the path written."""
    out = Path(path)
    chosen = format_for(out, fmt)
    write_atomic(out, render_bytes(drawing, chosen, options))
    return out
