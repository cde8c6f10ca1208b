"""Read an SVG file as data, safely: an expat walk with line numbers that refuses hostile content.

Nothing is rendered, executed or fetched. The reader refuses, each as one problem with its line:
DTDs and entity declarations (defusedxml), ``href``/``xlink:href`` not starting with ``#``,
``url(...)`` not pointing at ``#...``, ``@import``, ``<?xml-stylesheet?>``, ``<script>``,
``<foreignObject>`` and other embedding elements, animation elements (they rewrite attributes),
``on*`` event attributes, nested ``<svg>``, CSS ``transform`` in a ``style`` attribute (it would
move geometry without the reader seeing it), a root ``width``/``height`` that is not a sane length
and a ``viewBox`` that is not four sane numbers. Reading stops at ``MAX_ELEMENTS`` elements or
``MAX_DEPTH`` levels of nesting; path data over ``MAX_PATH_CHARS`` is refused.

:class:`SvgReader` applies every ``transform`` attribute down the tree and hands each element to
:meth:`SvgReader.element`, which a subclass overrides to collect what it needs (``template.py``
collects vessels and outlines). defusedxml's policy and exceptions apply to expat (see
:meth:`SvgReader.feed`); both are imported only when a file is read.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from diagram.drawing.template.pathdata import IDENTITY, Affine, parse_transform
from diagram.errors import Problem

if TYPE_CHECKING:
    from xml.parsers import expat

Attributes = Mapping[tuple[str | None, str], str]  # every attribute, by (namespace, name)

SVG_NS = "http://www.w3.org/2000/svg"
MAX_ELEMENTS = 100_000  # far above any hand-drawn map; a file past it is refused unread to its end
MAX_DEPTH = 100  # levels of element nesting
MAX_PATH_CHARS = 200_000  # path data of one element
MAX_VIEWBOX = 100_000.0

_REFUSED_ELEMENTS = frozenset(
    {"script", "foreignobject", "iframe", "embed", "object", "handler"}
    | {"animate", "animatemotion", "animatetransform", "set", "discard"}  # they rewrite attributes
)
_HIDDEN_CONTAINERS = frozenset({"defs", "symbol", "clippath", "mask", "pattern", "marker"})
_LENGTH = re.compile(r"^\s*(\d+(?:\.\d*)?|\.\d+)\s*(?:px|pt|pc|mm|cm|in|%)?\s*$")
_URL = re.compile(r"url\(\s*(['\"]?)(.*?)\1\s*\)", re.IGNORECASE | re.DOTALL)


@dataclass(frozen=True)
class Element:
    """One element as the reader meets it, its checks done and its transform resolved."""

    uri: str | None  # namespace
    local: str  # name as written
    tag: str  # name in lower case
    where: str  # how messages name it: ``path[id=right-CFA]``
    plain: dict[str, str]  # attributes without a namespace
    attrs: Attributes  # every attribute, by (namespace, name)
    transform: Affine  # of the element and its ancestors, into the root's user units
    hidden: bool  # inside defs/symbol/clipPath/...: never drawn


@dataclass(frozen=True)
class _Frame:
    tag: str
    transform: Affine
    hidden: bool  # inside defs/symbol/clipPath/...: never drawn


class _TooLarge(Exception):
    """Stop reading: the file is past a size limit."""

    def __init__(self, where: str, value: str | None, rule: str) -> None:
        super().__init__(rule)
        self.where, self.value, self.rule = where, value, rule


@dataclass
class SvgReader:
    """SAX content handler checking every element and collecting every problem met on the way."""

    file: str  # as messages name it
    problems: list[Problem] = field(default_factory=list)
    viewbox: tuple[float, float, float, float] | None = None
    fatal: bool = False  # the XML could not be read to its end: later checks are moot
    root_line: int | None = None
    title: list[str] = field(default_factory=list)  # text of the root's <title>
    elements: int = 0
    _stack: list[_Frame] = field(default_factory=list)
    _expat: expat.XMLParserType | None = None
    _style_text: list[str] = field(default_factory=list)

    def element(self, el: Element) -> None:
        """Collect what a subclass needs from one element (called after its checks)."""

    def end_element(self) -> None:
        """Close the element last passed to :meth:`element`."""

    def feed(self, data: bytes) -> None:
        """Read the whole document; bad or hostile input becomes problems, never an exception.

        The expat parser is driven directly, with defusedxml's policy and its exceptions: a
        DTD, an entity declaration or an external entity reference stops the read (as
        defusedxml's expat reader does with ``forbid_dtd``, ``forbid_entities`` and
        ``forbid_external``). Going through ``xml.sax`` would import ``urllib.request`` and the
        e-mail package, a good part of a cold start.
        """
        from xml.parsers import expat

        from defusedxml.common import DefusedXmlException

        parser = self._parser()
        try:
            parser.Parse(data, True)
        except _TooLarge as exc:
            self.fatal = True
            self.problem(exc.where, exc.value, exc.rule, "simplify the artwork")
        except DefusedXmlException:
            self.fatal = True
            self.problem(
                "<!DOCTYPE>",
                None,
                "DTDs, entity declarations and external entities are refused",
                "remove the <!DOCTYPE ...> declaration and any entities",
            )
        except expat.ExpatError as exc:
            self.fatal = True
            rule = f"is not well-formed XML: {expat.ErrorString(exc.code)}"
            self.problems.append(Problem(self.file, exc.lineno, "xml", None, rule))

    def _parser(self) -> expat.XMLParserType:
        """Return an expat parser passing its events to this reader, namespaces resolved."""
        from xml.parsers import expat

        from defusedxml.common import DTDForbidden, EntitiesForbidden, ExternalReferenceForbidden

        parser = expat.ParserCreate(namespace_separator=" ")
        self._expat = parser

        def doctype(name: str, sysid: str | None, pubid: str | None, _internal: bool) -> None:
            raise DTDForbidden(name, sysid, pubid)

        def entity(name: str, _param: bool, value: str | None, base: str | None, *ids: Any) -> None:
            raise EntitiesForbidden(name, value, base, ids[0], ids[1], None)

        def unparsed(name: str, base: str | None, sysid: str, pubid: str | None, note: str) -> None:
            raise EntitiesForbidden(name, None, base, sysid, pubid, note)

        def external(context: str, base: str | None, sysid: str | None, pubid: str | None) -> int:
            raise ExternalReferenceForbidden(context, base, sysid, pubid)

        def start(name: str, attributes: dict[str, str]) -> None:
            self.start(_split(name), {_split(k): v for k, v in attributes.items()})

        parser.StartDoctypeDeclHandler = doctype
        parser.EntityDeclHandler = entity
        parser.UnparsedEntityDeclHandler = unparsed
        parser.ExternalEntityRefHandler = external
        parser.StartElementHandler = start
        parser.EndElementHandler = lambda _name: self._end()
        parser.CharacterDataHandler = self._characters
        parser.ProcessingInstructionHandler = self._instruction
        return parser

    def _end(self) -> None:
        if self._stack.pop().tag == "style":
            # Checked whole: the parser may split text anywhere, even inside "url(".
            self.check_css("".join(self._style_text), "style")
            self._style_text.clear()
        self.end_element()

    def _characters(self, content: str) -> None:
        if self._stack and self._stack[-1].tag == "style":
            self._style_text.append(content)
        elif len(self._stack) == 2 and self._stack[-1].tag == "title":
            self.title.append(content)

    def _instruction(self, target: str, data: str) -> None:
        if target.lower() == "xml-stylesheet":
            self.problem(
                "<?xml-stylesheet?>",
                data,
                "external stylesheets are refused",
                "remove the processing instruction",
            )

    def line(self) -> int | None:
        """Return the line the parser is on (None before the document starts)."""
        return self._expat.CurrentLineNumber if self._expat is not None else None

    def problem(
        self,
        where: str,
        value: str | None,
        rule: str,
        hint: str | None = None,
        line: int | None = None,
    ) -> None:
        """Record a problem at the current line (or ``line``), quoting ``value`` clipped."""
        at = line if line is not None else self.line()
        self.problems.append(Problem(self.file, at, where, _quote(value), rule, hint))

    def start(self, name: tuple[str | None, str], attrs: Attributes) -> None:
        """Check one opening tag, resolve its transform and pass it to :meth:`element`."""
        uri, local = name
        tag = local.lower()
        plain = {k[1]: v for k, v in attrs.items() if k[0] is None}
        where = _describe(local, plain)
        self.elements += 1
        if self.elements > MAX_ELEMENTS:
            raise _TooLarge(where, None, f"more than {MAX_ELEMENTS} elements are refused")
        if len(self._stack) >= MAX_DEPTH:
            raise _TooLarge(where, None, f"nesting deeper than {MAX_DEPTH} levels is refused")
        self.check_attributes(where, attrs)
        parent = self._stack[-1] if self._stack else None
        if parent is None:
            self.root(uri, local, plain)
        elif tag == "svg":
            self.problem(
                where,
                None,
                "nested <svg> elements are not read",
                "turn it into a <g> with a transform",
            )
        if tag in _REFUSED_ELEMENTS:
            self.problem(
                where,
                None,
                f"<{local}> is refused in a map template",
                "remove it: the template is read as data only",
            )
        transform = parent.transform if parent else IDENTITY
        if "transform" in plain:
            try:
                transform = transform @ parse_transform(plain["transform"])
            except ValueError as exc:
                self.problem(f"{where}.transform", plain["transform"], str(exc))
        hidden = (parent.hidden if parent else False) or tag in _HIDDEN_CONTAINERS
        self._stack.append(_Frame(tag, transform, hidden))
        self.element(Element(uri, local, tag, where, plain, attrs, transform, hidden))

    def root(self, uri: str | None, local: str, plain: dict[str, str]) -> None:
        """Check the root element: ``<svg>`` in the SVG namespace, sane size and viewBox."""
        if uri != SVG_NS or local != "svg":
            self.problem(
                f"<{local}>",
                uri,
                "the root element must be <svg> in the SVG namespace",
                f'use <svg xmlns="{SVG_NS}" viewBox="...">',
            )
        self.root_line = self.line()
        for key in ("width", "height"):
            m = _LENGTH.match(plain.get(key, "1"))
            if m is None or not 0 < float(m.group(1)) <= MAX_VIEWBOX:
                self.problem(
                    f"svg.{key}",
                    plain[key],
                    f"must be a length above 0 and at most {MAX_VIEWBOX:.0f} (number and unit)",
                    f'e.g. {key}="210mm", or leave it out',
                )
        raw = plain.get("viewBox")
        if raw is None:
            self.problem("svg.viewBox", None, "is missing", 'add viewBox="0 0 400 1000"')
            return
        try:
            box = [float(v) for v in re.split(r"[\s,]+", raw.strip())]
        except ValueError:
            box = []
        if (
            len(box) != 4
            or not all(math.isfinite(v) and abs(v) <= MAX_VIEWBOX for v in box)
            or not all(1 <= v <= MAX_VIEWBOX for v in box[2:])
        ):
            self.problem(
                "svg.viewBox",
                raw,
                "must be four numbers: min-x min-y width height, with width and height "
                f"between 1 and {MAX_VIEWBOX:.0f}",
                'e.g. viewBox="0 0 400 1000"',
            )
            return
        self.viewbox = (box[0], box[1], box[2], box[3])

    def check_attributes(self, where: str, attrs: Attributes) -> None:
        """Refuse event attributes, external references and CSS that moves or fetches."""
        for (_ns, local), value in attrs.items():
            if local.lower().startswith("on"):
                self.problem(
                    f"{where}.{local}",
                    value,
                    "event attributes are refused",
                    "remove it: the template is read as data only",
                )
            elif local == "href" and not value.strip().startswith("#"):
                self.problem(
                    f"{where}.href",
                    value,
                    "external references are refused",
                    "embed the artwork as paths; only '#id' references are allowed",
                )
            elif local == "style":
                self.check_css(value, f"{where}.style")
                if re.search(r"(^|[;\s])transform\s*:", value):
                    self.problem(
                        f"{where}.style",
                        value,
                        "CSS transform is not read",
                        "use the transform attribute instead",
                    )
            else:
                self.check_css(value, f"{where}.{local}", imports=False)

    def check_css(self, text: str, where: str, imports: bool = True) -> None:
        """Refuse ``url(...)`` not pointing at ``#id`` and, in style text, ``@import``."""
        for m in _URL.finditer(text):
            if not m.group(2).strip().startswith("#"):
                self.problem(
                    where,
                    m.group(0),
                    "external references are refused",
                    "only url(#id) references are allowed",
                )
        if imports and "@import" in text.lower():
            self.problem(
                where, "@import", "external stylesheets are refused", "put the rules in the file"
            )

    def hidden_tag(self) -> str:
        """Return the tag of the outermost hiding container around the current element."""
        return next(f.tag for f in self._stack if f.tag in _HIDDEN_CONTAINERS)

    def shape_d(self, tag: str, where: str, plain: dict[str, str]) -> str | None:
        """Return the path data of a shape, or None after reporting why it cannot be read."""
        try:
            d = _shape_to_d(tag, plain)
        except ValueError as exc:
            self.problem(where, None, str(exc))
            return None
        if len(d) > MAX_PATH_CHARS:
            self.problem(
                where,
                f"{len(d)} characters",
                f"path data longer than {MAX_PATH_CHARS} characters is refused",
                "simplify the path",
            )
            return None
        return d


def _quote(value: str | None) -> str | None:
    return None if value is None else repr(clip(value))


def clip(text: str, limit: int = 60) -> str:
    """Return ``text`` cut to ``limit`` characters for a message."""
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _describe(local: str, plain: dict[str, str]) -> str:
    # A map's vessels are best named by their segment, so messages say which vessel is meant.
    for key in ("data-segment", "id"):
        if key in plain:
            extra = f"[data-side={plain['data-side']}]" if "data-side" in plain else ""
            return f"{local}[{key}={clip(plain[key], 30)}]{extra}"
    return local


def _shape_to_d(tag: str, a: dict[str, str]) -> str:
    """Return path data for a basic shape; ValueError when an attribute is missing or bad."""

    def num(key: str, default: float | None = None) -> float:
        raw = a.get(key)
        if raw is None:
            if default is None:
                raise ValueError(f"<{tag}> needs a {key} attribute")
            return default
        try:
            value = float(raw.strip().removesuffix("px"))
        except ValueError:
            raise ValueError(f"<{tag}> {key}={raw!r} is not a number") from None
        if not math.isfinite(value):
            raise ValueError(f"<{tag}> {key}={raw!r} is not a finite number")
        return value

    if tag == "path":
        if "d" not in a:
            raise ValueError("<path> needs a d attribute")
        return a["d"]
    if tag == "line":
        return f"M {num('x1', 0)} {num('y1', 0)} L {num('x2', 0)} {num('y2', 0)}"
    if tag in ("polyline", "polygon"):
        pts = a.get("points", "").strip()
        if not pts:
            raise ValueError(f"<{tag}> needs a points attribute")
        return f"M {pts}" + (" Z" if tag == "polygon" else "")
    if tag == "rect":
        x, y, w, h = num("x", 0), num("y", 0), num("width"), num("height")
        return f"M {x} {y} H {x + w} V {y + h} H {x} Z"
    if tag == "circle":
        rx = ry = num("r")
    else:
        rx, ry = num("rx"), num("ry")
    cx, cy = num("cx", 0), num("cy", 0)
    return f"M {cx - rx} {cy} A {rx} {ry} 0 1 0 {cx + rx} {cy} A {rx} {ry} 0 1 0 {cx - rx} {cy} Z"


def _split(name: str) -> tuple[str | None, str]:
    """Return (namespace, local name) of an expat name written ``"namespace local"``."""
    uri, _, local = name.rpartition(" ")
    return (uri or None), local
