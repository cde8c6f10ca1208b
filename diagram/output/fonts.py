"""The shipped DejaVu Sans, made the only font cairo can find, whatever the environment says.

The label layout measures text with the shipped TTF files (``drawing.textmetrics``); PDF and PNG
text must be drawn with the very same files or labels grow into each other. Cairo finds fonts
through fontconfig, whose configuration normally comes from the system or from the
``FONTCONFIG_FILE`` variable, either of which may lack DejaVu or map its name to another face.

``use_shipped_fonts()`` therefore builds a private fontconfig configuration that holds only the
shipped files and makes it fontconfig's current one, once per process, before cairo first looks
a font up. Nothing is read from or written to ``os.environ``; every family name then resolves to
DejaVu Sans (the sheet names no other). It talks to the fontconfig library that cairo itself
links, through ctypes, so it costs no import of its own.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import functools
from pathlib import Path

from diagram.errors import ExportError

FONT_DIR = Path(__file__).resolve().parent.parent / "fonts"
FONT_FILES: tuple[str, ...] = ("DejaVuSans.ttf", "DejaVuSans-Bold.ttf")
FAMILY = "DejaVu Sans"
_LIBRARY = "libfontconfig.so.1"


def _fontconfig() -> ctypes.CDLL:
    name = ctypes.util.find_library("fontconfig") or _LIBRARY
    try:
        lib = ctypes.CDLL(name)
    except OSError as exc:
        raise ExportError(
            f"PDF and PNG output need the fontconfig library ({exc}); install it, e.g. "
            "'apt-get install -y fontconfig'."
        ) from None
    lib.FcConfigCreate.restype = ctypes.c_void_p
    lib.FcConfigCreate.argtypes = []
    lib.FcConfigAppFontAddFile.restype = ctypes.c_int
    lib.FcConfigAppFontAddFile.argtypes = [ctypes.c_void_p, ctypes.c_char_p]
    lib.FcConfigSetCurrent.restype = ctypes.c_int
    lib.FcConfigSetCurrent.argtypes = [ctypes.c_void_p]
    return lib


@functools.cache
def use_shipped_fonts() -> None:
    """Make a configuration of only the shipped fonts fontconfig's current one (once).

    Call it before the first text is drawn by cairo in this process; the configuration is
    kept for the life of the process (fontconfig holds it, so it is never freed).
    """
    lib = _fontconfig()
    config = lib.FcConfigCreate()
    if not config:
        raise ExportError("fontconfig could not create a font configuration (out of memory?).")
    for name in FONT_FILES:
        path = FONT_DIR / name
        if not lib.FcConfigAppFontAddFile(config, str(path).encode()):
            raise ExportError(f"{path}: the shipped font could not be loaded; reinstall limbchart.")
    if not lib.FcConfigSetCurrent(config):
        raise ExportError("fontconfig refused the shipped font configuration.")
