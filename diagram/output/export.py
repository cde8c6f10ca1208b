"""The export stage: write a drawing as SVG, PDF, PNG, DICOM or JSON, atomically.

One ``export()`` with a fixed registry of writers keyed by format (``WRITERS``, read-only; a
caller that needs other behaviour passes its own mapping as ``writers=``); the format comes from
the output suffix unless given. PDF and PNG are painted from the drawing's Scene by cairo
(``output.cairo_backend``) or, with ``ExportOptions(renderer="cairosvg")`` or a drawing given only
as SVG text, converted from the SVG by CairoSVG in its safe mode (``unsafe=False``: it never
fetches anything but ``data:`` URLs). Either way the shipped DejaVu Sans is the only font cairo
sees (``output.fonts``). Every write goes to a temporary file in the destination folder and is
given its name only when complete, so a failed run leaves no partial file. An existing output is
never replaced unless asked for (``overwrite``), and then only by a complete new one.
"""

from __future__ import annotations

import contextlib
import errno
import os
import secrets
import signal
import threading
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path
from types import MappingProxyType
from typing import TYPE_CHECKING, Any, Literal

from diagram.errors import ExportError

if TYPE_CHECKING:
    from diagram.drawing.scene import Scene
    from diagram.output.dicom import DicomIdentity
    from diagram.reading.study import Study


@dataclass(frozen=True)
class Drawing:
    """What the pipeline produced for one study: the Scene and the results document.

    ``scene`` is the laid-out sheet (its further pages in ``scene.more``); each format's writer
    renders it as it needs. A drawing may also or instead be given as SVG text (``svg_pages``,
    page 1 first), which is then what the SVG writer writes and what CairoSVG converts; the cairo
    renderer paints the Scene whenever there is one (the teaching export gives both: its SVG
    allow-listed, its Scene already de-identified).
    ``study`` gives the DICOM header its patient and exam attributes; ``dicom`` overrides them
    (the teaching export passes de-identified ones).
    """

    results: dict[str, Any]
    scene: Scene | None = None
    svg_pages: tuple[str, ...] = ()
    study: Study | None = None
    dicom: DicomIdentity | None = None

    def __post_init__(self) -> None:
        if self.scene is None and not self.svg_pages:
            raise ValueError("a Drawing needs a scene or the SVG text of its pages")

    @cached_property
    def pages(self) -> tuple[str, ...]:
        """Return the SVG text of every page, page 1 first (rendered once, when first asked)."""
        if self.svg_pages:
            return self.svg_pages
        from diagram.output.svg import render_pages

        assert self.scene is not None  # __post_init__
        return render_pages(self.scene)

    @property
    def svg(self) -> str:
        """Return the SVG text of page 1."""
        return self.pages[0]

    @property
    def page_count(self) -> int:
        """Return the number of pages."""
        if self.svg_pages:
            return len(self.svg_pages)
        assert self.scene is not None  # __post_init__
        return self.scene.page_count


@dataclass(frozen=True)
class ExportOptions:
    """Format-specific settings.

    ``renderer`` chooses how PDF and PNG are drawn: ``"cairo"`` paints the Scene directly,
    ``"cairosvg"`` converts the SVG text (the reference route, and the one taken for a drawing
    given only as SVG text).
    """

    png_dpi: float = 150.0
    renderer: Renderer = "cairo"


Renderer = Literal["cairo", "cairosvg"]
RENDERERS: tuple[Renderer, ...] = ("cairo", "cairosvg")
Writer = Callable[[Drawing, ExportOptions], bytes]


def _cairosvg() -> Any:
    from diagram.output.fonts import use_shipped_fonts

    try:
        import cairosvg
    except OSError as exc:  # the Python package is there but the system cairo library is not
        raise ExportError(
            f"PDF and PNG output need the cairo library ({exc}); install it, e.g. "
            "'apt-get install -y libcairo2'."
        ) from None
    use_shipped_fonts()
    return cairosvg


def _svg(drawing: Drawing, options: ExportOptions) -> bytes:
    from diagram.output.pages import stack_svgs

    return stack_svgs(drawing.pages).encode("utf-8")


def _scene(drawing: Drawing, options: ExportOptions) -> Scene | None:
    """Return the Scene to paint with cairo, or None for the CairoSVG route."""
    return drawing.scene if options.renderer == "cairo" else None


def _title(drawing: Drawing) -> str:
    """Return the document title: the Scene's, or the kind of sheet for SVG text alone.

    A NUL character (a lab or site name may hold one) is left out: cairo takes the title as a C
    string, which ends at the first NUL.
    """
    if drawing.scene is not None and drawing.scene.title:
        return drawing.scene.title.replace("\x00", "")
    from diagram.drawing.sheet.header import KIND

    return KIND


def _pdf(drawing: Drawing, options: ExportOptions) -> bytes:
    from diagram.output.docmeta import fixed_date

    date, title = fixed_date(), _title(drawing)
    scene = _scene(drawing, options)
    if scene is not None:
        from diagram.output.cairo_backend import pdf_bytes

        return pdf_bytes(scene, title=title, date=date)
    _cairosvg()  # fontconfig pointed at the shipped fonts; a missing cairo said in one line
    from diagram.output.svg import pdf_from_svgs

    return pdf_from_svgs(drawing.pages, title=title, date=date)


def _png(drawing: Drawing, options: ExportOptions) -> bytes:
    from diagram.output.docmeta import png_with_dpi
    from diagram.output.pages import GAP_PT, stack_pngs

    gap = round(GAP_PT * options.png_dpi / 72)
    scene = _scene(drawing, options)
    if scene is not None:
        from diagram.output.cairo_backend import png_pages

        return png_with_dpi(stack_pngs(png_pages(scene, options.png_dpi), gap), options.png_dpi)
    cairosvg = _cairosvg()
    images = [
        cairosvg.svg2png(
            bytestring=page.encode("utf-8"),
            unsafe=False,
            dpi=options.png_dpi,
            background_color="white",
        )
        for page in drawing.pages
    ]
    return png_with_dpi(stack_pngs(images, gap), options.png_dpi)


def _dcm(drawing: Drawing, options: ExportOptions) -> bytes:
    from diagram._version import __version__
    from diagram.output.dicom import DicomIdentity, encapsulated_pdf, identity_from_study

    if drawing.dicom is not None:
        ident = drawing.dicom
    elif drawing.study is not None:
        ident = identity_from_study(drawing.study)
    else:
        ident = DicomIdentity()
    return encapsulated_pdf(_pdf(drawing, options), ident, version=__version__)


def _json(drawing: Drawing, options: ExportOptions) -> bytes:
    from diagram.output.results import results_json

    return results_json(drawing.results)


def _fhir(drawing: Drawing, options: ExportOptions) -> bytes:
    from diagram.output.dicom import DOCUMENT_TITLE
    from diagram.output.fhir import fhir_bytes

    return fhir_bytes(drawing.results, _pdf(drawing, options), DOCUMENT_TITLE)


WRITERS: Mapping[str, Writer] = MappingProxyType(
    {
        "svg": _svg,
        "pdf": _pdf,
        "png": _png,
        "dcm": _dcm,
        "json": _json,
        "fhir": _fhir,
    }
)
FORMATS: tuple[str, ...] = tuple(WRITERS)
FHIR_SUFFIX = ".fhir.json"  # a FHIR bundle is JSON: the double suffix tells it from results


def suffix_for(fmt: str) -> str:
    """Return the file suffix (without its dot) a format is written under."""
    return FHIR_SUFFIX.lstrip(".") if fmt == "fhir" else fmt


def format_for(
    path: Path, forced: str | None = None, writers: Mapping[str, Writer] = WRITERS
) -> str:
    """Return the output format: ``forced`` if given, else the path's suffix."""
    if forced is None and path.name.lower().endswith(FHIR_SUFFIX):
        return "fhir"
    fmt = (forced or path.suffix.lstrip(".")).lower()
    if fmt not in writers:
        shown = forced if forced else (path.suffix or "(no suffix)")
        raise ExportError(
            f"{path}: output format {shown!r} is not one of {', '.join(writers)}; "
            "give a suffix such as .pdf or use --format."
        )
    return fmt


def render_bytes(
    drawing: Drawing,
    fmt: str,
    options: ExportOptions | None = None,
    *,
    writers: Mapping[str, Writer] = WRITERS,
) -> bytes:
    """Return the drawing encoded in one format, without writing anything.

    ``writers`` replaces the registry (e.g. a test's writer that fails). SIGINT and SIGTERM are
    held meanwhile (see ``held_signals``) and handled once it returns.
    """
    with held_signals():
        return writers[fmt](drawing, options or ExportOptions())


@contextlib.contextmanager
def held_signals() -> Iterator[None]:
    """Hold SIGINT and SIGTERM in the main thread meanwhile; they are handled on the way out.

    Used around encoding a drawing, and by a batch around each study it draws in-process.

    A handler that raises (Ctrl-C, or the command line's SIGTERM handler) could otherwise raise
    inside cairo's write callback, where cffi prints the exception and drops it, and cairo then
    fails with an unrelated error. Python runs signal handlers only in the main thread, so in
    other threads there is nothing to hold; a process with other threads that leave these
    signals unblocked could still see its handler run during the encoding.
    """
    main = threading.current_thread() is threading.main_thread()
    if not main or not hasattr(signal, "pthread_sigmask"):
        yield
        return
    previous = signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT, signal.SIGTERM})
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, previous)


PART_SUFFIX = ".part"
_CREATE_NEW = (
    os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0) | getattr(os, "O_BINARY", 0)
)


def write_atomic(path: Path, data: bytes, *, overwrite: bool = True) -> None:
    """Write ``data`` to ``path`` through a temporary file and a rename (or a link).

    The temporary file (``.NAME.RANDOM.part`` beside the target) is named before it is created,
    so it is removed whatever stops the write: an OSError, or an interrupt arriving between any
    two steps. The target is either untouched or holds the complete new file.

    With ``overwrite`` false the complete file is linked to its name, which fails if the name
    exists, however it got there: a file made meanwhile by another process is never replaced
    (there is no moment between a check and a rename). File systems without hard links get
    the name reserved with an exclusive create, then the complete file renamed onto it.
    """
    folder = path.parent  # Path("m.svg").parent is Path(".")
    _check_target(path, folder)
    # at most 64 + 23 bytes, so that any name the folder takes has a temporary name too
    stem = os.fsencode(path.name)[:64].decode("utf-8", "ignore")
    tmp = folder / f".{stem}.{secrets.token_hex(8)}{PART_SUFFIX}"
    owned: Path | None = tmp  # what the cleanup removes; set before the file exists
    try:
        try:
            fd = os.open(tmp, _CREATE_NEW, 0o666)
        except FileExistsError as exc:
            owned = None  # another writer's file: never ours to remove
            raise ExportError(_cannot_write(path, folder, exc)) from None
        try:
            view = memoryview(data)
            while view:
                view = view[os.write(fd, view) :]
            os.fsync(fd)
        finally:
            os.close(fd)
        if overwrite:
            os.replace(tmp, path)
        else:
            _link_new(tmp, path)
    except FileExistsError:
        raise ExportError(exists_message(path)) from None
    except OSError as exc:
        raise ExportError(_cannot_write(path, folder, exc)) from None
    except ValueError:  # a NUL character, or text no file name can hold
        raise ExportError(f"{path}: is not a usable file name.") from None
    finally:
        if owned is not None:
            with contextlib.suppress(OSError):  # gone already once renamed into place
                os.unlink(owned)


def write_all(files: Sequence[tuple[Path, bytes]], *, overwrite: bool = True) -> tuple[Path, ...]:
    """Write every file atomically, in order; on any failure remove the ones written, then raise.

    All the files or none: an error or an interrupt between two writes takes back those already
    written, except files that existed before and were replaced under ``overwrite`` (they cannot
    be brought back). Without ``overwrite`` each file is created exclusively (:func:`write_atomic`).
    """
    made: list[Path] = []
    try:
        for path, data in files:
            existed = overwrite and os.path.lexists(path)
            write_atomic(path, data, overwrite=overwrite)
            if not existed:
                made.append(path)
    except BaseException:
        for path in made:
            with contextlib.suppress(OSError):
                path.unlink()
        raise
    return tuple(path for path, _ in files)


def exists_message(path: Path) -> str:
    """Return the line that refuses to replace an existing output."""
    return f"{path}: exists already and was left as it was (give --overwrite to replace it)."


_NO_HARD_LINKS = {errno.EPERM, errno.EMLINK, errno.EXDEV, errno.ENOTSUP, errno.EOPNOTSUPP}


def _link_new(tmp: Path, path: Path) -> None:
    """Give the complete file ``tmp`` the name ``path``; FileExistsError if the name is taken."""
    try:
        os.link(tmp, path)
        return
    except OSError as exc:
        if isinstance(exc, FileExistsError) or exc.errno not in _NO_HARD_LINKS:
            raise
    fd = os.open(path, _CREATE_NEW, 0o666)  # the name is ours from here on
    os.close(fd)
    try:
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(path)  # the empty placeholder made just above
        raise


def _check_target(path: Path, folder: Path) -> None:
    """Refuse a target that is a folder, or whose folder is missing, before anything is made."""
    try:
        if path.is_dir():
            raise ExportError(f"{path}: is a folder; give a file name such as {path / 'map.pdf'}.")
        if not folder.is_dir():
            if folder.exists():
                raise ExportError(f"{path}: {folder} is a file, not a folder.")
            raise ExportError(f"{path}: the folder {folder} does not exist.")
    except OSError as exc:  # e.g. a folder on the way that cannot be searched
        raise ExportError(_cannot_write(path, folder, exc)) from None


def _cannot_write(path: Path, folder: Path, exc: OSError) -> str:
    """Return the one-line message for an OSError met while writing ``path``."""
    code = exc.errno
    if code in (errno.EACCES, errno.EPERM):
        why = f"no permission to write in the folder {folder}"
    elif code == errno.EROFS:
        why = f"the folder {folder} is on a read-only file system"
    elif code in (errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC)):
        why = "no space left on the disk (or the disk quota is used up); nothing was written"
    elif code == errno.ENAMETOOLONG:
        why = "the file name is too long"
    elif code == errno.EISDIR:
        why = "it is a folder"
    elif code == errno.ENOTDIR:
        why = "a part of the path is a file, not a folder"
    else:
        why = (exc.strerror or str(exc)).rstrip(".")
    return f"{path}: cannot be written: {why}."


def export(
    drawing: Drawing,
    path: str | Path,
    fmt: str | None = None,
    options: ExportOptions | None = None,
    *,
    overwrite: bool = False,
    writers: Mapping[str, Writer] = WRITERS,
) -> Path:
    """Write the drawing to ``path`` in its format; return the path written.

    An existing file at ``path`` is refused (``ExportError``, the file untouched) unless
    ``overwrite`` is true. ``writers`` replaces the registry of writers by format (its keys are
    the formats known).
    """
    out = Path(path)
    chosen = format_for(out, fmt, writers)
    refuse_existing(out, overwrite)
    write_atomic(out, render_bytes(drawing, chosen, options, writers=writers), overwrite=overwrite)
    return out


def refuse_existing(path: Path, overwrite: bool) -> None:
    """Refuse an existing file at ``path`` before any work, unless ``overwrite``.

    Only a quick answer for the user: the write itself is what guarantees that a file made
    meanwhile is not replaced.
    """
    if not overwrite and os.path.lexists(path) and not path.is_dir():
        raise ExportError(exists_message(path))
