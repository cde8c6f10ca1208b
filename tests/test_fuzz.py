"""Fuzzing the command line: any study or criteria file ends in a drawing or in one-line problems.

Every case runs through ``diagram.cli.main.main`` exactly as ``limbchart check FILE``,
``limbchart draw FILE -o OUT/out.svg`` or ``limbchart criteria show FILE`` would. It must end
with exit status 0 and a complete output, or with exit status 2, one or more single-line
messages and no output at all: never another exception, never a hang (an alarm stops a case
after ``CASE_SECONDS``), never a temporary file left in the output folder.

Inputs are of three kinds, in YAML and in JSON: valid studies (which must draw), almost valid
ones (a valid study with one mutation: a key renamed, a value of the wrong type, a number out of
range, a segment name misspelt, a lesion too long, a required key dropped), and garbage
(random bytes, random trees with random keys, types and Unicode, YAML punctuation soup).
Case counts come from the hypothesis profile (tests/conftest.py).
"""

from __future__ import annotations

import contextlib
import decimal
import io
import json
import math
import os
import shutil
import signal
import tempfile
import traceback
import xml.etree.ElementTree as ET
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from types import FrameType
from typing import Any

import pytest
import yaml
from hypothesis import assume, example, given, note, reject, settings
from hypothesis import strategies as st

from diagram import anatomy
from diagram.cli.main import main
from diagram.criteria import parse_criteria
from diagram.errors import CriteriaError
from diagram.output.results import CAUTION
from diagram.reading.load import study_schema

ROOT = Path(__file__).resolve().parents[1]
CASE_SECONDS = 60  # a case still running after this is a hang (hypothesis's deadline is 10 s)
NATIVE_CRITERIA = (ROOT / "diagram" / "criteria" / "native.yaml").read_text("utf-8")
EXAMPLE = ROOT / "examples" / "normal.yaml"


# Open defects in other modules, found by these tests, keyed by (exception, module). While one
# is open, a fuzz case that ends in it is set aside (hypothesis.reject) instead of failing, so the
# harness keeps guarding against every other failure; its smallest input goes into REPRODUCERS
# (bottom of this file) with the exception it raises. When the fix lands, delete the entry here:
# test_fixed_defect_stays_fixed then requires the reproducer to end in a drawing or problems.
OPEN_DEFECTS: dict[tuple[str, str], str] = {}  # none open: see the fixed reproducers


def defect(exc: BaseException) -> tuple[str, str]:
    """Return (exception name, innermost module of the package it passed through)."""
    frames = [f.filename for f in traceback.extract_tb(exc.__traceback__)]
    ours = [f for f in frames if f.startswith(str(ROOT / "diagram"))]
    where = Path(ours[-1]).relative_to(ROOT).as_posix() if ours else "?"
    return type(exc).__name__, where


@contextlib.contextmanager
def open_defects_set_aside(enabled: bool = True) -> Iterator[None]:
    try:
        yield
    except Exception as exc:
        if enabled and defect(exc) in OPEN_DEFECTS:
            note(f"set aside, open defect: {OPEN_DEFECTS[defect(exc)]}")
            reject()
        raise


def cases(share: float) -> int:
    """Return this test's number of cases: ``share`` times the profile's max_examples."""
    base: int = settings().max_examples
    return max(10, round(base * share))


# --- running one case ---------------------------------------------------------------------------


class Hang(BaseException):
    """A case ran past CASE_SECONDS (a BaseException, so that no ``except Exception`` eats it)."""


@contextlib.contextmanager
def time_limit(seconds: float) -> Iterator[None]:
    def fire(signum: int, frame: FrameType | None) -> None:
        raise Hang(f"no answer within {seconds} s")

    previous = signal.signal(signal.SIGALRM, fire)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


@dataclass(frozen=True)
class Run:
    code: int | str | None
    out: str
    err: str


def run_cli(args: list[str]) -> Run:
    """Run the command line in this process with streams that encode like a real terminal's.

    stdout is strict UTF-8 (as Python sets it up under a UTF-8 locale), stderr escapes what it
    cannot encode; any exception but SystemExit fails the test with its traceback.
    """
    out = io.TextIOWrapper(io.BytesIO(), encoding="utf-8", errors="strict")
    err = io.TextIOWrapper(io.BytesIO(), encoding="utf-8", errors="backslashreplace")
    code: int | str | None = "main() returned instead of exiting"
    with time_limit(CASE_SECONDS), contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            main(args)
        except SystemExit as exc:
            code = exc.code
    out.flush()
    err.flush()
    assert isinstance(out.buffer, io.BytesIO) and isinstance(err.buffer, io.BytesIO)
    return Run(code, out.buffer.getvalue().decode("utf-8"), err.buffer.getvalue().decode("utf-8"))


@contextlib.contextmanager
def case_folder() -> Iterator[Path]:
    """Yield a fresh folder for one case (function-scoped fixtures do not reset between cases)."""
    folder = Path(tempfile.mkdtemp(prefix="fuzz-"))
    try:
        yield folder
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def assert_problems(run: Run, must_name: str | None = None) -> list[str]:
    """Check an exit-2 run: one or more single-line messages, each naming where and what."""
    assert run.code == 2, run
    assert "Traceback" not in run.err
    assert run.err.endswith("\n"), run.err
    lines = run.err[:-1].split("\n")
    for line in lines:
        assert line.isprintable(), f"control character in the message {line!r}"
        assert ": " in line, f"a message without place and rule: {line!r}"
        if must_name is not None:
            assert line.startswith(must_name), line
    return lines


def assert_complete(path: Path) -> None:
    """Check that an output file is whole: it ends as its format ends and reads back."""
    data = path.read_bytes()
    kind = path.suffix.lower()
    if kind == ".svg":
        assert data.rstrip().endswith(b"</svg>"), data[-80:]
        root = ET.fromstring(data)  # our own output: well-formed XML, no entities
        assert root.tag.endswith("svg")
    elif kind == ".json":
        assert isinstance(json.loads(data), dict)
    else:
        from pypdf import PdfReader

        assert data.startswith(b"%PDF-") and data.rstrip().endswith(b"%%EOF")
        assert len(PdfReader(io.BytesIO(data)).pages) >= 1


def study_runs(
    text: str | bytes,
    suffix: str,
    *,
    fmt: str = "svg",
    must_draw: bool = False,
    must_fail: bool = False,
    set_aside: bool = True,
) -> tuple[Run, Run]:
    """Check one study file and draw it as ``fmt``; check both runs against the contract."""
    with case_folder() as folder, open_defects_set_aside(set_aside):
        study = folder / f"study{suffix}"
        if isinstance(text, str):
            study.write_bytes(text.encode("utf-8", "surrogatepass"))
        else:
            study.write_bytes(text)
        out_dir = folder / "out"
        out_dir.mkdir()
        target = out_dir / f"out.{fmt}"
        checked = run_cli(["check", str(study)])
        drawn = run_cli(["draw", str(study), "-o", str(target)])
        note(f"check: {checked}\ndraw: {drawn}")
        left = sorted(os.listdir(out_dir))
        assert sorted(os.listdir(folder)) == sorted([study.name, "out"]), "stray file beside"
        if drawn.code == 0:
            assert left == [target.name], left
            assert str(target) in drawn.err and "Traceback" not in drawn.err
            assert_complete(target)
        else:
            assert left == [], f"a failed draw left {left}"
            assert_problems(drawn)
        if checked.code == 0:
            assert checked.err == "" and CAUTION in checked.out
        else:
            assert_problems(checked)
            assert checked.out == ""
        # a study that draws also checks (not the converse: draw also reads its prior)
        assert checked.code == 0 or drawn.code != 0, (checked, drawn)
        if must_draw:
            assert drawn.code == 0, drawn.err
        if must_fail:
            assert drawn.code == 2, "the mutation was accepted silently"
        return checked, drawn


# --- valid studies ------------------------------------------------------------------------------

SAFE_TEXT = st.text(st.characters(exclude_categories=["Cs"]), max_size=30)
ANY_TEXT = st.text(st.characters(), max_size=30)  # lone surrogates and control characters too
SEGMENT_IDS = anatomy.SEGMENT_IDS
NAMES = {
    seg: [n for n in (seg, seg.lower(), seg.replace("-", " "), f" {seg} ") if anatomy.resolve(n)]
    for seg in SEGMENT_IDS
}
SEXES = ("female", "male", "other", "unknown")
WAVEFORMS = ("triphasic", "biphasic", "monophasic", "absent")
FLOWS = ("antegrade", "retrograde", "absent")
PLAQUES = ("none", "soft", "mixed", "calcified")
NATIVE_BANDS = ("normal", "lt50", "50-74", "75-99", "occluded")
GRAFT_BANDS = ("graft-low", "graft-moderate", "graft-high", "occluded")
ANY_SET_BANDS = ("occluded",)  # a band id every shipped set has (a stent may cover the sample)


def numbers(low: float, high: float, *, above_low: bool = False) -> st.SearchStrategy[float]:
    """Numbers between ``low`` and ``high``: whole, fractional, and the ends that belong."""
    ends = [high] if above_low else [low, high]
    parts: list[st.SearchStrategy[float]] = [
        st.sampled_from(ends),
        st.floats(low, high, exclude_min=above_low, allow_nan=False),  # subnormals if in range
    ]
    first, last = math.floor(low) + 1 if above_low else math.ceil(low), math.floor(high)
    if first <= last:
        parts.append(st.integers(first, last))
    return st.one_of(parts)


VELOCITY = numbers(0, 800)
PEAK_VELOCITY = numbers(0, 800, above_low=True)  # a peak velocity of 0 is refused: no flow
PRESSURE = numbers(0, 400)
BRACHIAL = numbers(40, 300)  # plausible ranges: the schema's $comment gives each basis
RATIO = numbers(0.1, 20)
PRF_HZ = numbers(100, 50000)
F0_MHZ = numbers(1, 20)
DATES = st.dates().map(lambda d: d.isoformat()).filter(lambda s: len(s) == 10)


def segment_name(seg: str) -> st.SearchStrategy[str]:
    return st.sampled_from(NAMES[seg])


@st.composite
def samples(draw: st.DrawFn, bands: tuple[str, ...] = NATIVE_BANDS) -> dict[str, Any]:
    """One segment (or lesion) sample that breaks none of the loader's rules.

    ``bands`` are the ids an explicit ``band`` may take: those of the set that grades it.
    """
    kind = draw(st.sampled_from(("measured", "measured", "occluded", "not_assessed", "band")))
    out: dict[str, Any] = {}
    if kind == "occluded":
        out["occluded"] = True
    elif kind == "not_assessed":
        out["not_assessed"] = True
    elif kind == "band":
        out["band"] = draw(st.sampled_from(bands))
    else:
        psv = draw(PEAK_VELOCITY)
        out["psv"] = psv
        if draw(st.booleans()):
            out["edv"] = draw(numbers(0, psv))
        for key, value in (
            ("proximal_psv", PEAK_VELOCITY),
            ("vr", RATIO),
            ("prf_hz", PRF_HZ),
            ("f0_mhz", F0_MHZ),
        ):
            if draw(st.integers(0, 3)) == 0:
                out[key] = draw(value)
    if draw(st.booleans()):
        out["angle"] = draw(numbers(0, 90))
    for key, words in (("waveform", WAVEFORMS), ("plaque", PLAQUES), ("flow", FLOWS)):
        if draw(st.booleans()):
            out[key] = draw(st.sampled_from(words))
    if draw(st.integers(0, 4)) == 0:
        out["comment"] = draw(SAFE_TEXT)
    return out


def downstream(seg: str) -> list[str]:
    return [s for s in SEGMENT_IDS if anatomy.is_downstream(s, seg)]


@st.composite
def extents(draw: st.DrawFn, seg: str) -> dict[str, float]:
    """A from_cm and length_cm that fit in the limb below ``seg``."""
    out: dict[str, float] = {}
    start = 0.0
    if draw(st.booleans()):
        start = draw(numbers(0, anatomy.SEGMENTS[seg].length_cm))
        out["from_cm"] = start
    if draw(st.booleans()):
        room = anatomy.remaining_length_cm(seg, start)
        if room > 0:
            out["length_cm"] = draw(numbers(0, room, above_low=True))
    return out


@st.composite
def lesions(draw: st.DrawFn, seg: str, bands: tuple[str, ...]) -> dict[str, Any]:
    lesion: dict[str, Any] = {"at": draw(segment_name(seg))}
    lesion.update(draw(samples(bands)))
    lesion.update(draw(extents(seg)))
    below = downstream(seg)
    if lesion.get("occluded") is True and below and draw(st.booleans()):
        lesion["reconstitutes"] = draw(st.sampled_from(below))
    return lesion


@st.composite
def limbs(draw: st.DrawFn, with_aorta: bool) -> dict[str, Any]:
    choices = [s for s in SEGMENT_IDS if with_aorta or s != "AO"]
    limb: dict[str, Any] = {}
    stent_starts = draw(st.lists(st.sampled_from(choices), max_size=2))
    bands = ANY_SET_BANDS if stent_starts else NATIVE_BANDS
    chosen = draw(st.lists(st.sampled_from(choices), unique=True, max_size=12))
    if chosen:
        limb["segments"] = {draw(segment_name(seg)): draw(samples(bands)) for seg in chosen}
    at = draw(st.lists(st.sampled_from(choices), max_size=4))
    if at:
        limb["lesions"] = [draw(lesions(seg, bands)) for seg in at]
    if stent_starts:
        limb["stents"] = [
            {
                "from": start,
                "to": draw(st.sampled_from([start, *downstream(start)])),
                **draw(extents(start)),
            }
            for start in stent_starts
        ]
    graft_starts = draw(st.lists(st.sampled_from(choices), max_size=1))
    if graft_starts and downstream(graft_starts[0]):
        start = graft_starts[0]
        graft: dict[str, Any] = {
            "conduit": draw(st.sampled_from(("vein", "prosthetic"))),
            "from": start,
            "to": draw(st.sampled_from(downstream(start))),
        }
        sites = draw(
            st.lists(
                st.sampled_from(
                    ("proximal_anastomosis", "proximal", "mid", "distal", "distal_anastomosis")
                ),
                unique=True,
                max_size=3,
            )
        )
        if sites:
            graft["samples"] = {site: draw(samples(GRAFT_BANDS)) for site in sites}
        limb["grafts"] = [graft]
    return limb


def optional(draw: st.DrawFn, mapping: dict[str, Any], key: str, value: Any) -> None:
    if draw(st.booleans()):
        mapping[key] = draw(value)


@st.composite
def valid_studies(draw: st.DrawFn) -> dict[str, Any]:
    """A study that breaks none of the loader's rules (it must check and draw)."""
    study: dict[str, Any] = {"format": 1}
    patient: dict[str, Any] = {}
    for key in ("name", "id"):
        optional(draw, patient, key, SAFE_TEXT)
    optional(draw, patient, "birth_date", DATES)
    optional(draw, patient, "sex", st.sampled_from(SEXES))
    exam: dict[str, Any] = {}
    optional(draw, exam, "date", DATES)
    for key in ("accession", "site", "operator", "referrer", "indication"):
        optional(draw, exam, key, SAFE_TEXT)
    optional(draw, exam, "criteria", st.just("native"))
    optional(draw, exam, "study_uid", st.from_regex(r"\A1\.2(\.(0|[1-9][0-9]{0,5})){1,6}\Z"))
    pressures: dict[str, Any] = {}
    brachial: dict[str, Any] = {}
    optional(draw, brachial, "right", BRACHIAL)
    optional(draw, brachial, "left", BRACHIAL)
    if brachial:
        pressures["brachial"] = brachial
    for side in ("right", "left"):
        ankle: dict[str, Any] = {}
        for key in ("pt", "dp", "toe"):
            optional(draw, ankle, key, PRESSURE)
        if ankle:
            pressures[side] = ankle
    aorta_side = draw(st.sampled_from(("right", "left", None)))
    sides = draw(st.lists(st.sampled_from(("right", "left")), unique=True, max_size=2))
    limb_map = {side: draw(limbs(with_aorta=side == aorta_side)) for side in sides}
    for key, value in (
        ("patient", patient),
        ("exam", exam),
        ("pressures", pressures),
        ("limbs", limb_map),
    ):
        if value:
            study[key] = value
    optional(draw, study, "notes", SAFE_TEXT)
    return study


def dump(tree: Any, suffix: str, style: int) -> str:
    """Write a tree as YAML or JSON, in one of a few styles."""
    if suffix == ".json":
        return json.dumps(tree, ensure_ascii=style % 2 == 0, indent=None if style < 2 else 2)
    return yaml.safe_dump(
        tree, allow_unicode=style % 2 == 1, default_flow_style=style >= 2, sort_keys=False
    )


SUFFIXES = st.sampled_from((".yaml", ".json"))
STYLES = st.integers(0, 3)
FORMATS = st.sampled_from(("svg", "svg", "json"))  # the results document has its own writer


@settings(max_examples=cases(1.5))
@given(
    study=valid_studies(),
    suffix=SUFFIXES,
    style=STYLES,
    fmt=st.sampled_from(("svg",) * 6 + ("json",) * 3 + ("pdf",)),  # cairo is slower
)
def test_a_valid_study_checks_and_draws(
    study: dict[str, Any], suffix: str, style: int, fmt: str
) -> None:
    study_runs(dump(study, suffix, style), suffix, fmt=fmt, must_draw=True)


# --- almost valid studies -----------------------------------------------------------------------


def _schema_keys() -> frozenset[str]:
    keys: set[str] = set()

    def walk(node: object) -> None:
        if isinstance(node, dict):
            keys.update(node.get("properties", {}))
            for value in node.values():
                walk(value)
        elif isinstance(node, list):
            for value in node:
                walk(value)

    walk(study_schema())
    return frozenset(keys)


KNOWN_KEYS = _schema_keys()
Loc = tuple[str | int, ...]


def places(tree: Any, loc: Loc = ()) -> Iterator[tuple[Loc, Any]]:
    """Yield every (location, value) in a tree, the root last."""
    if isinstance(tree, dict):
        for key, value in tree.items():
            yield from places(value, (*loc, key))
    elif isinstance(tree, list):
        for i, value in enumerate(tree):
            yield from places(value, (*loc, i))
    yield loc, tree


def parent_of(tree: Any, loc: Loc) -> Any:
    for key in loc[:-1]:
        tree = tree[key]
    return tree


@st.composite
def typos(draw: st.DrawFn, word: str) -> str:
    """A misspelling: one character dropped, doubled, swapped or replaced."""
    i = draw(st.integers(0, max(len(word) - 1, 0)))
    how = draw(st.sampled_from(("drop", "double", "swap", "replace")))
    if how == "drop" and len(word) > 1:
        return word[:i] + word[i + 1 :]
    if how == "swap" and i + 1 < len(word) and word[i] != word[i + 1]:
        return word[:i] + word[i + 1] + word[i] + word[i + 2 :]
    if how == "double":
        return word[:i] + word[i : i + 1] * 2 + word[i + 1 :]
    letter = draw(st.sampled_from("abcdefghijklmnopqrstuvwxyz0123456789_-QXZ"))
    assume(letter != word[i : i + 1])
    return word[:i] + letter + word[i + 1 :]


SEGMENT_REFS = ("at", "reconstitutes", "from", "to")
LIMITS = {"psv": 800, "edv": 800, "proximal_psv": 800, "pt": 400, "dp": 400, "toe": 400}
WRONG_TYPES: dict[type, st.SearchStrategy[Any]] = {
    str: st.one_of(st.integers(), st.booleans(), st.none(), st.just([]), st.just({"a": 1})),
    float: st.one_of(
        st.sampled_from(["12", "abc", "", "1e3", "yes"]),
        st.booleans(),
        st.none(),
        st.just([1]),
    ),
    bool: st.one_of(st.sampled_from(["true", "yes", "no"]), st.integers(0, 1), st.none()),
    dict: st.one_of(SAFE_TEXT, st.integers(), st.just([{"a": 1}]), st.none()),
    list: st.one_of(SAFE_TEXT, st.integers(), st.just({"a": 1}), st.none()),
}
OUT_OF_RANGE = st.one_of(
    st.sampled_from([-1, -0.001, -1e9, 800.0001, 1e308, 10**30, -(10**30), 5e-324, -0.0]),
    st.sampled_from([math.inf, -math.inf, math.nan]),
    st.floats(allow_nan=True, allow_infinity=True),
)


def kind_of(value: Any) -> type:
    if isinstance(value, bool):
        return bool
    if isinstance(value, int | float):
        return float
    return type(value)


@st.composite
def mutated_studies(draw: st.DrawFn) -> tuple[dict[str, Any], str, bool]:
    """A valid study with one mutation; says what was done and whether it must be refused."""
    study = draw(valid_studies())
    spots = [(loc, value) for loc, value in places(study) if loc]
    how = draw(
        st.sampled_from(
            ("rename", "wrong type", "out of range", "segment typo", "too long", "drop required")
        )
    )
    if how == "rename":
        loc, value = draw(st.sampled_from(spots))
        assume(isinstance(loc[-1], str))
        key = str(loc[-1])
        new = draw(typos(key))
        holder = parent_of(study, loc)
        assume(new not in holder)
        holder[new] = holder.pop(key)
        under_segments = len(loc) >= 2 and loc[-2] == "segments"
        refused = new not in KNOWN_KEYS and not (under_segments and anatomy.resolve(new))
        return study, f"renamed {loc} to {new!r}", refused
    if how == "wrong type":
        loc, value = draw(st.sampled_from(spots))
        new = draw(WRONG_TYPES[kind_of(value)])
        parent_of(study, loc)[loc[-1]] = new
        return study, f"{loc} = {new!r}", True
    if how == "out of range":
        numeric = [(loc, v) for loc, v in spots if kind_of(v) is float and loc[-1] != "format"]
        assume(numeric)
        loc, value = draw(st.sampled_from(numeric))
        number: float = draw(OUT_OF_RANGE)
        parent_of(study, loc)[loc[-1]] = number
        limit = LIMITS.get(str(loc[-1]))
        refused = not math.isfinite(number) or number < 0
        refused = refused or (limit is not None and number > limit)
        return study, f"{loc} = {number!r}", refused
    if how == "segment typo":
        refs = [
            (loc, v)
            for loc, v in places(study)
            if len(loc) >= 2 and (loc[-1] in SEGMENT_REFS or loc[-2] == "segments")
        ]
        assume(refs)
        loc, value = draw(st.sampled_from(refs))
        holder = parent_of(study, loc)
        if loc[-2] == "segments":  # the key is the name
            new = draw(typos(str(loc[-1])))
            assume(new not in holder)
            holder[new] = holder.pop(loc[-1])
        else:
            new = draw(typos(str(value)))
            holder[loc[-1]] = new
        return study, f"segment name {loc} -> {new!r}", anatomy.resolve(new) is None
    if how == "too long":
        limb = study.setdefault("limbs", {}).setdefault("left", {})
        limb.pop("segments", None)  # keep the lesion the only problem
        seg = draw(st.sampled_from([s for s in SEGMENT_IDS if s != "AO"]))
        start = draw(numbers(0, anatomy.SEGMENTS[seg].length_cm))
        over = draw(st.floats(0.01, 1000))
        length = anatomy.remaining_length_cm(seg, start) + over
        limb["lesions"] = [{"at": seg, "from_cm": start, "length_cm": length}]
        study["limbs"] = {"left": limb}
        return study, f"lesion at {seg} from {start} cm, {length} cm long", True
    required = [(loc, v) for loc, v in spots if loc[-1] in ("format", "at", "to", "conduit")]
    loc, _ = draw(st.sampled_from(required or [(("format",), 1)]))
    del parent_of(study, loc)[loc[-1]]
    return study, f"dropped {loc}", True


@settings(max_examples=cases(6))
@given(mutation=mutated_studies(), suffix=SUFFIXES, style=STYLES, fmt=FORMATS)
def test_an_almost_valid_study_is_drawn_or_refused_in_one_line_per_problem(
    mutation: tuple[dict[str, Any], str, bool], suffix: str, style: int, fmt: str
) -> None:
    study, what, refused = mutation
    note(what)
    study_runs(dump(study, suffix, style), suffix, fmt=fmt, must_fail=refused)


# --- garbage ------------------------------------------------------------------------------------

KEYS = st.one_of(st.sampled_from(sorted(KNOWN_KEYS | set(SEGMENT_IDS))), ANY_TEXT)
SCALARS = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(),
    st.integers(-(10**400), 10**400),
    st.floats(),
    st.sampled_from([5e-324, 1e308, -0.0, 0.1, 800, 800.0000001]),
    ANY_TEXT,
    st.sampled_from(["", "yes", "no", "0x10", "010", "1:30", "1e3", ".nan", "~", "2026-02-30"]),
    st.sampled_from(SEGMENT_IDS),
)


def containers(inner: st.SearchStrategy[Any]) -> st.SearchStrategy[Any]:
    """Lists and mappings of ``inner`` (a named function: hypothesis reads its source)."""
    return st.one_of(st.lists(inner, max_size=4), st.dictionaries(KEYS, inner, max_size=5))


TREES = st.recursive(SCALARS, containers, max_leaves=40)


@st.composite
def garbage_studies(draw: st.DrawFn) -> Any:
    """A random tree, often dressed as a study so that the deeper checks are reached."""
    if draw(st.integers(0, 3)) == 0:
        return draw(TREES)
    study: dict[str, Any] = draw(st.dictionaries(KEYS, TREES, max_size=4))
    if draw(st.booleans()):
        study["format"] = 1
    section = st.dictionaries(KEYS, TREES, max_size=4)
    for key in ("patient", "exam", "pressures"):
        if draw(st.integers(0, 2)) == 0:
            study[key] = draw(section)
    if draw(st.booleans()):
        limb = {
            "segments": draw(st.dictionaries(KEYS, TREES, max_size=4)),
            "lesions": draw(st.lists(st.dictionaries(KEYS, TREES, max_size=4), max_size=3)),
        }
        study["limbs"] = {draw(st.sampled_from(("left", "right", "middle"))): limb}
    return study


def dump_garbage(tree: Any, suffix: str, style: int) -> str:
    try:
        return dump(tree, suffix, style)
    except (ValueError, yaml.YAMLError, RecursionError):  # ints too long to print, and so on
        assume(False)
        raise  # not reached


@settings(max_examples=cases(6))
@given(tree=garbage_studies(), suffix=SUFFIXES, style=STYLES, fmt=FORMATS)
@example(tree={"format": 1, "notes": "\ud800"}, suffix=".json", style=0, fmt="json")
def test_a_garbage_tree_is_refused_or_drawn_never_a_traceback(
    tree: Any, suffix: str, style: int, fmt: str
) -> None:
    study_runs(dump_garbage(tree, suffix, style), suffix, fmt=fmt)


@settings(max_examples=cases(3))
@given(data=st.binary(max_size=3000), suffix=SUFFIXES)
@example(data=b"\xef\xbb\xbf", suffix=".yaml")  # a BOM alone
@example(data=b"\xff\xfe{\x00}\x00", suffix=".json")  # UTF-16
@example(data=b'{"format": 1, "notes": "\\ud800"}', suffix=".json")
@example(data=b'format: 1\nnotes: "\\ud800"\n', suffix=".yaml")
def test_random_bytes_are_refused_never_a_traceback(data: bytes, suffix: str) -> None:
    study_runs(data, suffix)


YAML_SOUP = st.lists(
    st.sampled_from(
        [
            *"{}[],:-?&*!|>'\"%@`#\t\n =.0123456789abcxyz",
            "\n  ",
            ": ",
            "- ",
            "&a ",
            "*a",
            "!!str ",
            "!!python/object:os.system ",
            "---\n",
            "...\n",
            "%YAML 1.1\n",
            "? ",
            "<<: ",
            "format: 1\n",
            "limbs:\n",
            "  left:\n",
            "    segments:\n",
            "      CFA: ",
            "psv: ",
            "{psv: 1e3}",
            "\u2028",
            "\x85",
            "\x00",
        ]
    ),
    max_size=60,
).map("".join)


@settings(max_examples=cases(4))
@given(text=YAML_SOUP, suffix=SUFFIXES)
@example(text="format: 1\n" + "a: [" * 30 + "]" * 30 + "\n", suffix=".yaml")
@example(text='{"format": 1, "notes": ' + "[" * 5000 + "]" * 5000 + "}", suffix=".json")
def test_yaml_punctuation_soup_is_refused_never_a_traceback(text: str, suffix: str) -> None:
    study_runs(text, suffix)


# --- criteria files -----------------------------------------------------------------------------


@st.composite
def valid_criteria(draw: st.DrawFn) -> dict[str, Any]:
    """A lab criteria set that breaks none of the loader's rules."""
    drawn = draw(st.lists(numbers(0, 50, above_low=True), min_size=1, max_size=5))
    limits = sorted(set(drawn))  # vr_min rises band by band
    bands: list[dict[str, Any]] = [{"id": "ok", "label": "No stenosis", "when": {}}]
    for i, vr in enumerate(limits):
        when: dict[str, Any] = {"vr_min": vr}
        if draw(st.booleans()):
            when["psv_min"] = draw(numbers(0, 800, above_low=True))
            when["match"] = draw(st.sampled_from(("all", "any")))
        band: dict[str, Any] = {"id": f"b{i}", "label": draw(SAFE_TEXT.filter(bool)), "when": when}
        if draw(st.booleans()):
            band["source"] = draw(SAFE_TEXT)
        bands.append(band)
    bands.append({"id": "occ", "label": "Occluded", "occlusion": True})
    crit: dict[str, Any] = {
        "format": 1,
        "name": draw(SAFE_TEXT.filter(bool)),
        "title": draw(SAFE_TEXT.filter(bool)),
        "kind": "native",
        "source": draw(SAFE_TEXT.filter(bool)),
        "bands": bands,
    }
    if draw(st.booleans()):
        crit["lesion_floor"] = draw(st.sampled_from([b["id"] for b in bands]))
    return crit


def criteria_runs(
    text: str | bytes, *, must_show: bool = False, must_refuse: bool = False, set_aside: bool = True
) -> Run:
    """Show one criteria file, grade a study with it, and parse it; check all three."""
    with case_folder() as folder, open_defects_set_aside(set_aside):
        path = folder / "lab-criteria.yaml"
        path.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8", "surrogatepass"))
        shown = run_cli(["criteria", "show", str(path)])
        note(f"show: {shown}")
        if shown.code == 0:
            assert shown.err == "" and shown.out.strip()
        else:
            assert_problems(shown, must_name=str(path))
            assert shown.out == ""
        if must_show:
            assert shown.code == 0, shown.err
        if must_refuse:
            assert shown.code == 2, shown.out
        study = folder / "study.yaml"
        study.write_text(
            "format: 1\nlimbs: {left: {segments: {CFA: {psv: 100}, SFA-P: {psv: 250}}}}\n"
        )
        graded = run_cli(["check", str(study), "--criteria", str(path)])
        assert (graded.code == 0) == (shown.code == 0), (shown, graded)
        if graded.code != 0:
            assert_problems(graded, must_name=str(path))
        if isinstance(text, str):
            try:
                parse_criteria(text, "lab.yaml", "lab.yaml")
            except CriteriaError as err:
                assert err.lines() and shown.code == 2
        assert sorted(os.listdir(folder)) == ["lab-criteria.yaml", "study.yaml"]
        return shown


def crit_dump(tree: Any, style: int) -> str:
    try:
        return yaml.safe_dump(tree, allow_unicode=style % 2 == 1, default_flow_style=style >= 2)
    except (ValueError, yaml.YAMLError, RecursionError):
        assume(False)
        raise


@settings(max_examples=cases(1))
@given(crit=valid_criteria(), style=STYLES)
def test_a_valid_criteria_file_is_shown_and_grades(crit: dict[str, Any], style: int) -> None:
    criteria_runs(crit_dump(crit, style), must_show=True)


def mutate(draw: st.DrawFn, tree: dict[str, Any]) -> str:
    """Change one place of a valid file's tree in place; return what was done, for the report."""
    spots = [(loc, value) for loc, value in places(tree) if loc]
    loc, value = draw(st.sampled_from(spots))
    holder = parent_of(tree, loc)
    how = draw(st.sampled_from(("rename", "wrong type", "out of range", "drop", "any value")))
    if how == "rename" and isinstance(loc[-1], str):
        new = draw(typos(loc[-1]))
        assume(new not in holder)
        holder[new] = holder.pop(loc[-1])
    elif how == "wrong type":
        holder[loc[-1]] = draw(WRONG_TYPES.get(kind_of(value), SCALARS))
    elif how == "out of range":
        holder[loc[-1]] = draw(OUT_OF_RANGE)
    elif how == "drop":
        del holder[loc[-1]]
    else:
        holder[loc[-1]] = draw(TREES)
    return f"{how} at {loc}"


@st.composite
def mutated_criteria(draw: st.DrawFn) -> tuple[dict[str, Any], str]:
    crit = draw(valid_criteria())
    return crit, mutate(draw, crit)


@settings(max_examples=cases(3))
@given(mutation=mutated_criteria(), style=STYLES)
def test_an_almost_valid_criteria_file_is_shown_or_refused(
    mutation: tuple[dict[str, Any], str], style: int
) -> None:
    crit, what = mutation
    note(what)
    criteria_runs(crit_dump(crit, style))


UNKNOWN_KEYS = st.text("abcdefghijklmnopqrstuvwxyz_", min_size=1, max_size=8).map(
    lambda t: "x_" + t
)
OUT_OF_RANGE_VR = st.one_of(
    st.just(0),
    st.floats(-1e6, 0, allow_nan=False),
    st.floats(50, 1e6, exclude_min=True, allow_nan=False),
    st.just("2.0"),
)


@st.composite
def broken_criteria(draw: st.DrawFn) -> tuple[dict[str, Any], str]:
    """A valid criteria set with one change that surely breaks a rule of the loader."""
    crit = draw(valid_criteria())
    how = draw(st.sampled_from(("drop", "unknown key", "vr range", "look", "no occlusion")))
    if how == "drop":
        del crit[draw(st.sampled_from(("format", "name", "title", "source", "bands")))]
    elif how == "unknown key":
        crit[draw(UNKNOWN_KEYS)] = draw(SCALARS)
    elif how == "vr range":
        crit["bands"][1]["when"]["vr_min"] = draw(OUT_OF_RANGE_VR)
    elif how == "look":
        crit["bands"][0]["look"] = "x-" + draw(SAFE_TEXT)
    else:
        crit["bands"].pop()
    return crit, how


@settings(max_examples=cases(1))
@given(mutation=broken_criteria(), style=STYLES)
def test_a_criteria_file_breaking_a_rule_is_refused(
    mutation: tuple[dict[str, Any], str], style: int
) -> None:
    crit, what = mutation
    note(what)
    criteria_runs(crit_dump(crit, style), must_refuse=True)


@settings(max_examples=cases(3))
@given(
    source=st.one_of(
        YAML_SOUP,
        TREES.map(lambda t: yaml.safe_dump(t) if _dumpable(t) else "x: 1\n"),
        st.binary(max_size=1000),
    )
)
@example(source=NATIVE_CRITERIA)
@example(source="format: 1\nname: a\nname: b\n")
@example(source="a: " + "[" * 30 + "]" * 30 + "\n")
def test_a_garbage_criteria_file_is_refused_never_a_traceback(source: str | bytes) -> None:
    criteria_runs(source)


def _dumpable(tree: Any) -> bool:
    try:
        yaml.safe_dump(tree)
    except (ValueError, yaml.YAMLError, RecursionError):
        return False
    return True


# --- output names -------------------------------------------------------------------------------

OUTPUT_NAMES = st.text(
    st.characters(exclude_characters="/\x00", exclude_categories=["Cs"]), min_size=1, max_size=300
)


def output_runs(name: str, *, set_aside: bool = True) -> Run:
    """Draw the example into ``name`` in an empty folder; check the run against the contract."""
    with case_folder() as folder, open_defects_set_aside(set_aside):
        target = folder / name
        drawn = run_cli(["draw", str(EXAMPLE), "-o", str(target)])
        note(f"draw: {drawn}")
        left = os.listdir(folder)
        if drawn.code == 0:
            assert left == [name], left
            assert_complete(target)
        else:
            assert left == [], f"a failed draw left {left}"
            assert_problems(drawn)
        return drawn


@settings(max_examples=cases(1.5))
@given(
    name=OUTPUT_NAMES,
    suffix=st.sampled_from(("", ".svg", ".json", ".SVG", ".svg.json", ".txt", ".")),
)
@example(name="x" * 251, suffix=".svg")  # 255 bytes: the longest name a folder takes
@example(name="é" * 126, suffix=".svg")  # 256 bytes: one too many
@example(name="a\nb\x1b[2J", suffix=".svg")
def test_any_output_name_is_written_or_refused_in_one_line(name: str, suffix: str) -> None:
    assume(name + suffix not in (".", ".."))  # a folder: the batch form of draw, by design
    output_runs(name + suffix)


# --- lab profiles -----------------------------------------------------------------------------

TEXTURED = ("dots", "lines", "cross", "rings")
ONE_LINE = st.text(st.characters(exclude_categories=["Cs", "Cc"]), min_size=1, max_size=80).filter(
    lambda t: t.strip()
)
COLOURS = st.from_regex(r"\A#[0-9a-fA-F]{6}\Z")
HATCHES = ("none", "dots", "lines", "cross", "solid")


@st.composite
def valid_lab_profiles(draw: st.DrawFn) -> dict[str, Any]:
    """A lab profile that breaks none of the loader's rules (the study must draw with it)."""
    from diagram.drawing.style import default_style
    from diagram.drawing.template.mapfile import shipped_templates

    profile: dict[str, Any] = {}
    optional(draw, profile, "format", st.just(1))
    optional(draw, profile, "lab_name", ONE_LINE)
    optional(draw, profile, "template", st.sampled_from(sorted(shipped_templates())))
    optional(draw, profile, "page", st.sampled_from(("a4", "letter", "map")))
    optional(
        draw, profile, "font", st.sampled_from(("DejaVu Sans", "dejavu sans", " DejaVu Sans "))
    )
    defaults = default_style().band_map()
    bands: dict[str, Any] = {}
    for look in draw(st.lists(st.sampled_from(sorted(defaults)), unique=True, max_size=6)):
        fields: dict[str, Any] = {}
        optional(draw, fields, "tint", COLOURS)
        optional(draw, fields, "ink", COLOURS)
        hatches = (*HATCHES, "rings") if look == "not-assessed" else HATCHES
        optional(draw, fields, "hatch", st.sampled_from(hatches))
        optional(draw, fields, "spacing_pt", numbers(1, 12))
        optional(draw, fields, "angle_deg", numbers(0, 179.999))
        spacing = fields.get("spacing_pt", defaults[look].spacing_pt)
        optional(draw, fields, "weight_pt", numbers(0.1, min(6, spacing / 2)))
        hatch = fields.get("hatch", defaults[look].hatch)
        weight = fields.get("weight_pt", defaults[look].weight_pt)
        if hatch in TEXTURED and weight > spacing / 2:  # the default weight under a new spacing
            fields["weight_pt"] = spacing / 2
        bands[look] = fields
    empty_too: bool = draw(st.booleans())  # an empty bands mapping is allowed too
    if bands or empty_too:
        profile["bands"] = bands
    return profile


def lab_runs(
    text: str | bytes, *, must_draw: bool = False, must_refuse: bool = False, set_aside: bool = True
) -> Run:
    """Draw a study with a lab profile and parse the profile; check both against the contract."""
    from diagram.drawing.labprofile import LabProfileError, parse_lab_profile

    with case_folder() as folder, open_defects_set_aside(set_aside):
        path = folder / "lab.yaml"
        path.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8", "surrogatepass"))
        out_dir = folder / "out"
        out_dir.mkdir()
        target = out_dir / "out.svg"
        drawn = run_cli(["draw", str(EXAMPLE), "--lab", str(path), "-o", str(target)])
        note(f"draw: {drawn}")
        left = sorted(os.listdir(out_dir))
        if drawn.code == 0:
            assert left == ["out.svg"], left
            assert_complete(target)
        else:
            assert left == [], f"a failed draw left {left}"
            assert_problems(drawn, must_name=str(path))
        if must_draw:
            assert drawn.code == 0, drawn.err
        if must_refuse:
            assert drawn.code == 2, drawn.err
        if isinstance(text, str):
            try:
                parse_lab_profile(text, "lab.yaml", folder)
            except LabProfileError as err:
                assert err.lines() and drawn.code == 2
        assert sorted(os.listdir(folder)) == ["lab.yaml", "out"]
        return drawn


@settings(max_examples=cases(1))
@given(profile=valid_lab_profiles(), style=STYLES)
def test_a_valid_lab_profile_draws(profile: dict[str, Any], style: int) -> None:
    lab_runs(crit_dump(profile, style), must_draw=True)


@st.composite
def mutated_lab_profiles(draw: st.DrawFn) -> tuple[dict[str, Any], str]:
    profile = draw(valid_lab_profiles())
    profile.setdefault("lab_name", "Example Lab")
    return profile, mutate(draw, profile)


@settings(max_examples=cases(2))
@given(mutation=mutated_lab_profiles(), style=STYLES)
def test_an_almost_valid_lab_profile_draws_or_is_refused(
    mutation: tuple[dict[str, Any], str], style: int
) -> None:
    profile, what = mutation
    note(what)
    lab_runs(crit_dump(profile, style))


@st.composite
def broken_lab_profiles(draw: st.DrawFn) -> tuple[dict[str, Any], str]:
    """A valid lab profile with one change that surely breaks a rule of the loader."""
    profile = draw(valid_lab_profiles())
    how = draw(st.sampled_from(("unknown key", "page", "format", "tint")))
    if how == "unknown key":
        profile[draw(UNKNOWN_KEYS)] = draw(SCALARS)
    elif how == "page":
        profile["page"] = "x-" + draw(SAFE_TEXT)
    elif how == "format":
        profile["format"] = draw(st.integers(2, 99))
    else:
        profile.setdefault("bands", {})["normal"] = {
            "tint": draw(st.from_regex(r"\A#[0-9a-f]{5}\Z"))
        }
    return profile, how


@settings(max_examples=cases(1))
@given(mutation=broken_lab_profiles(), style=STYLES)
def test_a_lab_profile_breaking_a_rule_is_refused(
    mutation: tuple[dict[str, Any], str], style: int
) -> None:
    profile, what = mutation
    note(what)
    lab_runs(crit_dump(profile, style), must_refuse=True)


@settings(max_examples=cases(2))
@given(
    source=st.one_of(
        YAML_SOUP,
        TREES.map(lambda t: yaml.safe_dump(t) if _dumpable(t) else "x: 1\n"),
        st.binary(max_size=1000),
    )
)
@example(source="bands: {lt50: {tint: #ECCB6A}}\n")  # a bare # starts a comment
@example(source="a: " + "[" * 30 + "]" * 30 + "\n")
def test_a_garbage_lab_profile_is_refused_never_a_traceback(source: str | bytes) -> None:
    lab_runs(source)


# --- defects found by fuzzing, fixed ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class Reproducer:
    """The smallest known input for one entry of OPEN_DEFECTS."""

    defect: tuple[str, str]
    name: str
    kind: str  # "study", "criteria", "lab" or "output" (an output file name)
    text: str
    raises: type[BaseException]


GRADING = "diagram/assess/grading.py"
CRITERIA = "diagram/criteria/parse.py"
LEFT_SEGMENTS = "format: 1\nlimbs:\n  left:\n    segments:\n"
REPRODUCERS = [
    Reproducer(
        ("ZeroDivisionError", GRADING),
        "proximal-psv-0",
        "study",
        LEFT_SEGMENTS + "      CFA: {psv: 100}\n      SFA-P: {psv: 200, proximal_psv: 0}\n",
        ZeroDivisionError,
    ),
    Reproducer(
        ("ZeroDivisionError", GRADING),
        "upstream-psv-0",
        "study",
        LEFT_SEGMENTS + "      CFA: {psv: 0}\n      SFA-P: {psv: 200}\n",
        ZeroDivisionError,
    ),
    Reproducer(
        ("ZeroDivisionError", GRADING),
        "graft-proximal-psv-0",
        "study",
        "format: 1\nlimbs:\n  left:\n    grafts:\n      - {conduit: vein, from: CFA, "
        "to: POP-BK, samples: {mid: {psv: 100, proximal_psv: 0}}}\n",
        ZeroDivisionError,
    ),
    Reproducer(
        ("InvalidOperation", GRADING),
        "vr-8e32",
        "study",
        LEFT_SEGMENTS + "      CFA: {psv: 100}\n      SFA-P: {psv: 800, proximal_psv: 1.0e-30}\n",
        decimal.InvalidOperation,
    ),
    Reproducer(
        ("InvalidOperation", "diagram/assess/indices.py"),
        "abi-1e32",
        "study",
        "format: 1\npressures:\n  brachial: {right: 1.0e-30}\n  right: {pt: 100}\n",
        decimal.InvalidOperation,
    ),
    Reproducer(("TypeError", CRITERIA), "list-key", "criteria", "? [a, b]\n: 1\n", TypeError),
    Reproducer(
        ("TypeError", CRITERIA),
        "list-floor",
        "criteria",
        "format: 1\nlesion_floor: [a]\n",
        TypeError,
    ),
    Reproducer(
        ("ConstructorError", CRITERIA),
        "explicit-tag",
        "criteria",
        "format: !!python/object:os.system x\n",
        yaml.constructor.ConstructorError,
    ),
    Reproducer(
        ("RecursionError", CRITERIA),
        "deep-nesting",
        "criteria",
        "a: " + "[" * 2000 + "]" * 2000 + "\n",
        RecursionError,
    ),
]


@pytest.mark.parametrize("case", REPRODUCERS, ids=lambda r: r.name)
@settings(max_examples=1, database=None)
@given(st.just(None))
def test_fixed_defect_stays_fixed(case: Reproducer, _: None) -> None:
    # once defects the fuzzing found (zero or tiny reference PSV, huge ratios, tags, complex
    # keys, deep nesting): now a drawing or one-line problems, like every other input
    if case.kind == "study":
        study_runs(case.text, ".yaml", set_aside=False)
    else:
        criteria_runs(case.text, set_aside=False)


# --- defects found by fuzzing later, fixed -------------------------------------------------------------

OPEN_REPRODUCERS = [
    Reproducer(
        ("OSError", "diagram/cli.py"),
        "output-name-too-long",
        "output",
        "x" * 300 + ".svg",
        OSError,
    ),
    Reproducer(
        ("InvalidOperation", GRADING),
        "vr-infinite",
        "study",
        LEFT_SEGMENTS + "      CFA: {psv: 100}\n      SFA-P: {psv: 800, proximal_psv: 5.0e-324}\n",
        decimal.InvalidOperation,
    ),
    Reproducer(
        ("InvalidOperation", "diagram/assess/indices.py"),
        "abi-infinite",
        "study",
        "format: 1\npressures:\n  brachial: {left: 5.0e-324}\n  left: {pt: 100}\n",
        decimal.InvalidOperation,
    ),
    Reproducer(
        ("RuntimeError", "diagram/labprofile.py"),
        "lab-template-unknown-user",
        "lab",
        'template: "~nosuchuser/map.svg"\n',
        RuntimeError,
    ),
    Reproducer(
        ("OverflowError", "diagram/labprofile.py"),
        "lab-huge-number",
        "lab",
        "bands: {lt50: {spacing_pt: 1" + "0" * 400 + "}}\n",
        OverflowError,
    ),
]


@pytest.mark.parametrize("case", OPEN_REPRODUCERS, ids=lambda r: r.name)
@settings(max_examples=1, database=None)
@given(st.just(None))
def test_later_fixed_defect_stays_fixed(case: Reproducer, _: None) -> None:
    # a name too long for the file system, ratios that overflow to inf, a "~user" template path
    # and a whole number too long for a float: now one-line problems or a drawing
    if case.kind == "study":
        study_runs(case.text, ".yaml", set_aside=False)
    elif case.kind == "output":
        output_runs(case.text, set_aside=False)
    else:
        lab_runs(case.text, set_aside=False)
