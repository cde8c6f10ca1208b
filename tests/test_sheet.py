"""The sheet around the map: pressure boxes, planning and change tables, pages, golden SVGs.

Golden files: ``tests/golden/<example>.svg`` is page 1 of each example on A4, and
``<example>.page2.svg`` its second page when it has one. After a deliberate change to the
drawing, regenerate them and review the diff:

    LIMBCHART_REGOLD=1 python -m pytest tests/test_sheet.py -k golden
"""

from __future__ import annotations

import io
import itertools
import os
from functools import cache, lru_cache
from pathlib import Path

import pytest
from test_layout import crowded, make_template, texts

from diagram.anatomy import Side
from diagram.assess.compare import Change, Comparison, abi_change
from diagram.assess.indices import limb_indices
from diagram.assess.planning import planning_note
from diagram.assess.results import Assessment, Finding
from diagram.drawing.layout import MIN_MAP_SHARE, layout
from diagram.drawing.map.marks import change_mark
from diagram.drawing.paper import MARGIN_PT
from diagram.drawing.scene import Box, CaseHeader, Group, Item, Polygon, Scene, Text, bounds
from diagram.drawing.sheet.cells import Entry, Row, Run, Table, Tone
from diagram.drawing.sheet.tableblock import Tables, row_heights
from diagram.drawing.sheet.tables import change_table, pressure_entries
from diagram.drawing.style import default_style
from diagram.drawing.template.mapfile import Template, load_template
from diagram.inputs import assess_file
from diagram.output.svg import pdf_from_svgs, render_pages, render_svg
from diagram.reading.load import load_study
from diagram.reading.study import LimbPressures, Presentation, Pressures

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = sorted(p.stem for p in (ROOT / "examples").glob("*.yaml"))
GOLDEN = Path(__file__).resolve().parent / "golden"
BUSIEST = ("followup-current", "clti-multilevel")  # most findings, both tables, two pages


@cache
def example(stem: str) -> Assessment:
    study = load_study(ROOT / "examples" / f"{stem}.yaml")
    return assess_file(study)


@cache
def sheet(stem: str, page: str = "a4") -> Scene:
    return layout(example(stem), shipped(), page=page, version="golden")


@lru_cache(maxsize=1)
def shipped() -> Template:
    return load_template()


def all_texts(scene: Scene) -> list[str]:
    return [t for page in scene.pages() for t in texts(page)]


def entry_text(entry: Entry) -> str:
    return "".join(run.text for run in entry.runs)


# ----------------------------------------------------------------------------- pressure boxes


def box(
    brachial: float,
    pt: float | None = None,
    toe: float | None = None,
    presentation: Presentation | None = Presentation.REST_PAIN,
) -> list[str]:
    pressures = Pressures(brachial, brachial, right=LimbPressures(pt=pt, toe=toe))
    ix = limb_indices(pressures, Side.RIGHT, presentation)
    return [entry_text(e) for e in pressure_entries(ix)]


@pytest.mark.parametrize(
    ("brachial", "pt", "abi"),
    [
        # ABI categories and the severity within abnormal: 2016 AHA/ACC PAD guideline (<= 0.90
        # abnormal, 0.91-0.99 borderline, 1.00-1.40 normal, > 1.40 noncompressible); severe
        # <= 0.40 (Sukul 2017). Each boundary just below, on and just above.
        (138, 96, "ABI 0.70 abnormal, mild\u2013moderate · PT 96 / brachial 138 mmHg"),
        (100, 40, "ABI 0.40 abnormal, severe · PT 40 / brachial 100 mmHg"),
        (100, 41, "ABI 0.41 abnormal, mild\u2013moderate · PT 41 / brachial 100 mmHg"),
        (100, 90, "ABI 0.90 abnormal, mild\u2013moderate · PT 90 / brachial 100 mmHg"),
        (100, 91, "ABI 0.91 borderline · PT 91 / brachial 100 mmHg"),
        (100, 99, "ABI 0.99 borderline · PT 99 / brachial 100 mmHg"),
        (100, 100, "ABI 1.00 normal · PT 100 / brachial 100 mmHg"),
        (100, 140, "ABI 1.40 normal · PT 140 / brachial 100 mmHg"),
        (100, 141, "ABI 1.41 noncompressible \u2014 use TBI · PT 141 / brachial 100 mmHg"),
        (100, None, "ABI not measured · no ankle pressure"),
    ],
)
def test_abi_line_shows_value_category_and_basis(
    brachial: float, pt: float | None, abi: str
) -> None:
    assert box(brachial, pt, 50)[0] == abi


@pytest.mark.parametrize(
    ("toe", "tbi"),
    [
        # TBI <= 0.70 abnormal (2016 AHA/ACC PAD guideline figure 2, "Abnormal (≤0.70)"; confirmed)
        (70, "TBI 0.70 abnormal · toe 70 / brachial 100 mmHg"),
        (71, "TBI 0.71 normal · toe 71 / brachial 100 mmHg"),
        (None, "TBI not measured · no toe pressure"),
    ],
)
def test_tbi_line_shows_value_category_and_basis(toe: float | None, tbi: str) -> None:
    assert box(100, 120, toe)[1] == tbi


@pytest.mark.parametrize(
    ("pt", "toe", "grade"),
    [
        # WIfI ischaemia grade, Mills 2014 (SVS): toe >= 60 grade 0, 40-59 grade 1, 30-39
        # grade 2, < 30 grade 3; the worst of ABI, ankle and toe counts
        (130, 60, "Ischaemia (WIfI) grade 0"),
        (130, 59, "Ischaemia (WIfI) grade 1"),
        (130, 30, "Ischaemia (WIfI) grade 2"),
        (130, 29, "Ischaemia (WIfI) grade 3"),
        (None, None, "Ischaemia (WIfI) not graded"),
    ],
)
def test_ischaemia_line_names_the_grade_and_what_set_it(
    pt: float | None, toe: float | None, grade: str
) -> None:
    line = box(100, pt, toe)[2]
    head, basis = line.split(" · ", 1)
    assert head == grade
    assert basis.startswith("worst of ") or basis == "no ankle or toe pressure"
    if pt is not None:
        assert basis.endswith("; limb marked rest pain (CLTI)")


# WIfI is a CLTI tool (Mills 2014): a claudicant's leg with pressures outside the CLTI range
# (ESC 2017: toe < 30 mmHg) is not given a grade; one in the range is, and says why.
@pytest.mark.parametrize(
    ("toe", "line"),
    [
        (31, "Ischaemia (WIfI) not applied · limb marked claudication: WIfI grades CLTI limbs"),
        (30, "Ischaemia (WIfI) not applied · limb marked claudication: WIfI grades CLTI limbs"),
        (
            29,
            "Ischaemia (WIfI) grade 3 · worst of ABI 1.30 (grade 0), ankle 130 mmHg (grade 0), "
            "toe 29 mmHg (grade 3); pressures in the CLTI range: toe 29 < 30 mmHg",
        ),
    ],
)
def test_ischaemia_grade_only_for_clti_legs(toe: float, line: str) -> None:
    assert box(100, 130, toe, Presentation.CLAUDICATION)[2] == line


@pytest.mark.parametrize("stem", EXAMPLES)
def test_no_pressure_value_without_its_basis(stem: str) -> None:
    for ix in example(stem).indices.values():
        for entry in pressure_entries(ix):
            tones = [run.tone for run in entry.runs]
            assert tones[0] is Tone.STRONG and Tone.BASIS in tones, entry
            basis = "".join(run.text for run in entry.runs if run.tone is Tone.BASIS)
            assert basis.strip(" ·"), entry


def test_pressure_boxes_sit_under_each_ankle() -> None:
    scene = sheet("multilevel-occlusion")
    right, left = scene.pressure_regions
    assert right.box.y >= scene.vessel_box.bottom and left.box.y >= scene.vessel_box.bottom
    assert right.box.right <= scene.width_pt / 2 <= left.box.x
    shown = texts(scene)
    # 58 / 150 = 0.387 -> 0.39: abnormal and severe (2016 AHA/ACC; Sukul 2017)
    assert "ABI 0.39 abnormal, severe" in shown and "· DP 58 / brachial 150 mmHg" in shown


# ----------------------------------------------------------------------------- planning table


def test_planning_table_for_the_surgeon() -> None:
    scene = sheet("clti-multilevel")
    shown = all_texts(scene)
    joined = " ".join(shown)
    for words in ("Planning summary", "Right", "Left", "Inflow (aorta to CFA)", "Pedal"):
        assert words in shown
    # a 27 cm flush SFA occlusion: FP4 (> 20 cm, GVG 2019 fig. 5.1, recalled), stage III
    assert "FP4" in shown and "III" in shown
    assert "flush SFA occlusion of 27 cm" in joined
    assert "SFA-P from 0 cm" in shown  # the occlusion, its length and reconstitution
    assert "27 cm \u2192 reconstitutes POP-AK" in joined.replace(",", "")
    assert "inflow disease \u226550%, staged apart" in joined
    assert "applied" in shown  # the calcification assumption, said where it applied
    # SVS runoff score (Rutherford 1997): 1 + ATA occluded over > half its length 3 + PTA
    # 50-99% 2 + PER 0 = 6
    assert "6" in shown and "= 1 + ATA 3 + PTA 2 + PER 0" in joined
    assert " ".join(planning_note().split()) in " ".join(joined.split())


def test_no_planning_table_without_a_planning_summary(template: Template) -> None:
    scene = layout(crowded(), template, version="x")
    assert "Planning summary" not in all_texts(scene) and scene.page_count == 1


@pytest.mark.parametrize("stem", BUSIEST)
def test_table_text_stays_in_its_column(stem: str) -> None:
    scene = sheet(stem)
    for page in scene.pages():
        for group in page.walk():
            if not (isinstance(group, Group) and group.role == "table"):
                continue
            frame = bounds(group)
            assert frame is not None
            half = (frame.x + 84.0 + frame.right) / 2  # the two leg columns meet here
            for item in group.items:
                if not (isinstance(item, Text) and "-row-" in item.id):
                    continue
                found = bounds(item)
                assert found is not None
                column = item.id.split("-row-")[1].split("-")[1]
                if column == "0" and "-label" not in item.id:  # right leg's column
                    assert found.right <= half + 0.01, item.text
                assert found.right <= MARGIN_PT + (page.width_pt - 2 * MARGIN_PT) + 0.01


# ----------------------------------------------------------------------------- change table


def test_change_table_and_map_symbols() -> None:
    scene = sheet("followup-current")
    shown = all_texts(scene)
    joined = " ".join(shown)
    # 2026-05-04 to 2026-11-23: 27 + 30 + 31 + 31 + 30 + 31 + 23 = 203 days (own arithmetic)
    assert "· interval 203 days" in shown
    assert "significant fall > 0.15" in shown  # left 0.95 -> 0.63 (SVS 2018; Westerband 1997)
    assert "0.95 \u2192 0.63 (\u22120.32)" in shown
    assert "0.79 \u2192 0.80 (+0.01)" in shown and "significant" not in joined.split("ABI")[0]
    assert "new stent" in shown and "SFA-M at 3 cm" in shown
    assert "PSV 230 \u2192 410 cm/s (+78%)" in joined  # (410 - 230) / 230 = 78.26%: whole percent
    on_map = {
        "_".join(g.id.removeprefix("change-").split("_")[:2]): g.role
        for g in scene.walk()
        if isinstance(g, Group) and g.id.startswith("change-")
    }
    assert on_map == {
        "right_EIA": "change better",  # 50-74% before the stent, in-stent <50% now
        "right_SFA-M": "change worse",  # 50-74% -> 75-99%
        "left_SFA-D": "change new-occlusion",
        "left_POP-AK": "change new-occlusion",
    }
    for words in ("worse since the prior exam", "better since the prior exam", "new occlusion"):
        assert words in shown  # the legend explains each symbol in use
    assert "occlusion no longer seen" not in shown


def test_change_symbols_lie_beside_their_segment_and_clear_of_labels() -> None:
    scene = sheet("followup-current")
    template = shipped()
    for group in scene.walk():
        if not (isinstance(group, Group) and group.id.startswith("change-")):
            continue
        found = bounds(group)
        assert found is not None
        key = next(
            k for k in template.vessels if group.id.startswith("change-" + k.replace("/", "_"))
        )
        vessel = template.vessels[key]
        scale = scene.map_box.w / template.viewbox[2]
        length = vessel.geometry.length()
        cx, cy = found.x + found.w / 2, found.y + found.h / 2
        nearest = min(
            (
                (scene.map_box.x + (px - template.viewbox[0]) * scale - cx) ** 2
                + (scene.map_box.y + (py - template.viewbox[1]) * scale - cy) ** 2
            )
            ** 0.5
            for px, py in (vessel.geometry.point_at(length * k / 50) for k in range(51))
        )
        # design margin, own choice: the symbol's centre within 12 pt of its segment
        assert nearest <= 12.0, group.id
        for lb in scene.label_boxes:
            assert not found.intersects(lb.box), (group.id, lb.text)
    # left SFA-D: the symbol marks the new occlusion (7-9 cm), not the older stenosis at 3-5 cm
    mark = next(g for g in scene.walk() if g.id.startswith("change-left_SFA-D"))
    occlusion = next(i for i in scene.walk() if i.id == "lesion-left-1-span-0")
    found, span = bounds(mark), bounds(occlusion)
    assert found is not None and span is not None
    assert span.y <= found.y + found.h / 2 <= span.bottom


@pytest.mark.parametrize(
    ("kind", "corners", "solid"),
    [
        (Change.WORSE, 3, True),  # a solid triangle pointing up
        (Change.BETTER, 3, False),  # an open triangle pointing down
        (Change.NEW_OCCLUSION, 4, True),  # a solid diamond
        (Change.RESOLVED_OCCLUSION, 4, False),  # an open diamond
    ],
)
def test_change_symbols_differ_by_shape_and_fill(kind: Change, corners: int, solid: bool) -> None:
    style = default_style()
    group = change_mark("m", kind.value, 50.0, 50.0, style)
    assert isinstance(group, Group)
    mark = group.items[-1]
    assert isinstance(mark, Polygon) and len(mark.points) == corners
    assert (mark.fill == style.change_ink) is solid
    top = min(p[1] for p in mark.points)
    on_top = [p for p in mark.points if p[1] == top]
    # worse and the diamonds have one point on top; better is flat on top (it points down)
    assert len(on_top) == (2 if kind is Change.BETTER else 1)


@pytest.mark.parametrize(
    ("before", "after", "flagged"),
    [
        # a fall of more than 0.15 is significant (SVS 2018 graft table; Westerband 1997)
        (95, 79, True),  # 0.95 -> 0.79: a fall of 0.16
        (95, 80, False),  # 0.95 -> 0.80: a fall of exactly 0.15 is not
        (80, 95, False),  # a rise
    ],
)
def test_abi_fall_beyond_015_is_flagged(before: float, after: float, flagged: bool) -> None:
    def ix(pt: float) -> object:
        return limb_indices(Pressures(100, 100, right=LimbPressures(pt=pt)), Side.RIGHT)

    change = abi_change(Side.RIGHT, ix(before), ix(after))  # type: ignore[arg-type]
    table = change_table(Comparison(10, (), (), (), (change,), ()), {})
    abi_row = next(r for r in table.rows if r.label == "ABI")
    cell = " ".join(entry_text(e) for e in abi_row.cells[0])
    assert ("significant fall > 0.15" in cell) is flagged
    assert "SVS 2018" in cell


def test_no_change_table_without_a_prior() -> None:
    shown = all_texts(sheet("followup-prior"))
    assert "Change since the prior exam" not in shown
    assert not any(t.endswith("since the prior exam") for t in shown)


# ----------------------------------------------------------------------------- teaching header


def test_teaching_sheet_shows_only_the_case() -> None:
    from dataclasses import replace

    a = example("followup-current")
    quoting = Finding("test", None, None, f"see '{a.study.exam.indication}'")
    a = replace(a, warnings=(*a.warnings, quoting))
    case = CaseHeader("TC-4J7K", 2026, "74", "male")
    scene = layout(a, shipped(), version="x", case=case)
    shown = all_texts(scene)
    assert "Teaching case TC-4J7K" in shown and "2026" in shown and "74" in shown
    joined = " ".join(shown)
    p, e = a.study.patient, a.study.exam
    for secret in (
        p.name,
        p.id,
        p.birth_date.isoformat() if p.birth_date else None,
        e.date.isoformat() if e.date else None,
        e.accession,
        e.site,
        e.operator,
        e.indication,
        a.study.notes,
        "collaterals from the descending genicular artery",  # a lesion comment
    ):
        assert secret and secret not in joined, secret
    for field in ("Patient", "ID", "Born", "Exam", "Accession", "Indication"):
        assert field not in shown
    assert "1 note(s) left out: they quote the study's own text" in shown
    assert scene.page_count == 2 and "Teaching case TC-4J7K" in texts(scene.more[0])


# ----------------------------------------------------------------------------- pages and blocks


@pytest.mark.parametrize(("stem", "page"), list(itertools.product(EXAMPLES, ("a4", "letter"))))
def test_no_two_blocks_overlap_and_all_fit_the_page(stem: str, page: str) -> None:
    scene = sheet(stem, page)
    content = scene.height_pt - 2 * MARGIN_PT
    for number, one in enumerate(scene.pages(), start=1):
        assert (one.page_number, one.page_count) == (number, scene.page_count)
        names = [b.id for b in one.blocks]
        assert {"header", "caution", "footer"} <= set(names)
        for a, b in itertools.combinations(one.blocks, 2):
            assert not a.box.intersects(b.box), (a.id, b.id)
        for b in one.blocks:
            assert b.box.x >= MARGIN_PT - 1 and b.box.right <= one.width_pt - MARGIN_PT + 1, b
            assert b.box.y >= MARGIN_PT - 1 and b.box.bottom <= one.height_pt - MARGIN_PT + 1, b
        if scene.page_count > 1:
            assert f"page {number} of {scene.page_count} · limbchart golden" in texts(one)
    first = {b.id for b in scene.blocks}
    assert {"map", "labels-right", "labels-left", "legend"} <= first
    assert {"pressure-right", "pressure-left"} <= first  # every example measured pressures
    assert scene.map_box.h >= MIN_MAP_SHARE * content - 0.01
    tables = {
        b.id for p in scene.pages() for b in p.blocks if b.id.startswith(("planning", "changes"))
    }
    assert any(t.startswith("planning") for t in tables)
    assert any(t.startswith("changes") for t in tables) is (example(stem).comparison is not None)


@pytest.mark.parametrize("stem", BUSIEST)
def test_busiest_sheets_put_the_tables_on_page_2(stem: str) -> None:
    for page in ("a4", "letter"):
        scene = sheet(stem, page)
        assert scene.page_count == 2
        assert "Planning summary" in texts(scene.more[0])
        assert any(t.endswith(": page 2.") for t in texts(scene))


def test_the_normal_study_fits_one_page() -> None:
    scene = sheet("normal")
    assert scene.page_count == 1 and "Planning summary" in texts(scene)


def walk_texts(items: list[Item]) -> list[str]:
    return [t.text for t in bounds_walk(Group("all", tuple(items)))]


def bounds_walk(item: Item) -> list[Text]:
    if isinstance(item, Text):
        return [item]
    if isinstance(item, Group):
        return [t for child in item.items for t in bounds_walk(child)]
    return []


def test_tables_flow_over_pages_row_by_row() -> None:
    style = default_style()
    rows = tuple(
        Row(f"row {k}", ((Entry((Run(f"value {k}"),)),), (Entry((Run("x"),)),))) for k in range(40)
    )
    table = Table("big", (Run("Big table"),), rows, (Entry((Run("a note"),)),))
    x0, x1, top, bottom = 30.0, 560.0, 40.0, 300.0
    pages = Tables([table], style, {}).paginate(x0, x1, top, bottom)
    per_page = (bottom - top) // row_heights(table, x0, x1, style)[0]
    assert len(pages) >= 40 // per_page
    seen = [t for page in pages for t in walk_texts(page) if t.startswith("row ")]
    assert seen == [f"row {k}" for k in range(40)]  # every row once, in order
    for page in pages:
        found = bounds(Group("p", tuple(page)))
        assert found is not None and top - 0.01 <= found.y and found.bottom <= bottom + 0.01
    assert "(continued)" not in walk_texts(pages[0])
    assert all("(continued)" in walk_texts(page) for page in pages[1:])
    assert "a note" in walk_texts(pages[-1]) and "a note" not in walk_texts(pages[0])


# ----------------------------------------------------------------------------- PDF of all pages


def test_pdf_from_svgs_makes_one_page_per_svg() -> None:
    from pypdf import PdfReader

    from diagram.output.fonts import use_shipped_fonts

    use_shipped_fonts()
    svgs = render_pages(sheet("clti-multilevel"))
    letter = render_pages(sheet("clti-multilevel", "letter"))
    data = pdf_from_svgs([*svgs, letter[0]])
    assert data[:5] == b"%PDF-"
    reader = PdfReader(io.BytesIO(data))
    assert len(reader.pages) == 3
    sizes = [
        (round(float(p.mediabox.width), 1), round(float(p.mediabox.height), 1))
        for p in reader.pages
    ]
    assert sizes == [(595.3, 841.9), (595.3, 841.9), (612.0, 792.0)]  # ISO 216 A4; ANSI Letter
    assert "page 1 of 2" in reader.pages[0].extract_text()
    second = reader.pages[1].extract_text()
    assert "Planning summary" in second and "page 2 of 2" in second
    fonts = {
        str(f["/BaseFont"])
        for p in reader.pages
        for f in p["/Resources"]["/Font"].values()  # type: ignore[index]
    }
    assert all(name.endswith(("DejaVuSans", "DejaVuSans-Bold")) for name in fonts), fonts


def test_pdf_from_svgs_needs_a_page() -> None:
    with pytest.raises(ValueError, match="at least one page"):
        pdf_from_svgs([])


def test_pdf_from_svgs_keeps_cairosvg_safe_mode() -> None:
    entity = (
        '<?xml version="1.0"?><!DOCTYPE svg [<!ENTITY a "aaaa">]>'
        '<svg xmlns="http://www.w3.org/2000/svg" width="10" height="10"><text>&a;</text></svg>'
    )
    from defusedxml import EntitiesForbidden

    with pytest.raises(EntitiesForbidden):
        pdf_from_svgs([entity])
    outside = (
        '<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" '
        'width="10" height="10"><image xlink:href="file:///etc/hostname" width="10" height="10"/>'
        "</svg>"
    )
    secret = Path("/etc/hostname").read_bytes().strip() if Path("/etc/hostname").exists() else b""
    data = pdf_from_svgs([outside])  # the image is replaced by nothing, never read
    assert data[:5] == b"%PDF-" and (not secret or secret not in data)


# ----------------------------------------------------------------------------- golden SVGs


def golden_pages() -> list[tuple[str, int]]:
    return [(stem, n) for stem in EXAMPLES for n in range(1, sheet(stem).page_count + 1)]


def regold_asked(env: dict[str, str] | None = None) -> bool:
    """Return True when goldens are to be rewritten; refused in CI, where they are only compared."""
    env = dict(os.environ) if env is None else env
    if env.get("LIMBCHART_REGOLD") != "1":
        return False
    if env.get("CI"):
        raise pytest.UsageError("LIMBCHART_REGOLD is refused when CI is set: CI only compares.")
    return True


def test_regold_is_refused_in_ci() -> None:
    assert regold_asked({}) is False
    assert regold_asked({"LIMBCHART_REGOLD": "1"}) is True
    assert regold_asked({"LIMBCHART_REGOLD": "0", "CI": "true"}) is False
    with pytest.raises(pytest.UsageError, match="refused when CI is set"):
        regold_asked({"LIMBCHART_REGOLD": "1", "CI": "true"})


def golden_name(stem: str, number: int) -> str:
    return f"{stem}.svg" if number == 1 else f"{stem}.page{number}.svg"


@pytest.mark.parametrize(("stem", "number"), golden_pages())
def test_golden_svg(stem: str, number: int) -> None:
    svg = render_pages(sheet(stem))[number - 1]
    path = GOLDEN / golden_name(stem, number)
    if regold_asked():
        path.write_text(svg, encoding="utf-8", newline="\n")
    assert path.exists(), f"{path.name} missing: LIMBCHART_REGOLD=1 python -m pytest {__file__}"
    expected = path.read_bytes()
    assert svg.encode("utf-8") == expected, (
        f"{path.name} differs; if the change is meant, regenerate with "
        "LIMBCHART_REGOLD=1 python -m pytest tests/test_sheet.py -k golden and review the diff"
    )


def test_no_stale_golden_files() -> None:
    wanted = {golden_name(stem, n) for stem, n in golden_pages()}
    assert {p.name for p in GOLDEN.glob("*.svg")} == wanted


def test_each_page_is_rendered_from_its_own_scene() -> None:
    scene = sheet("clti-multilevel", "letter")
    pages = render_pages(scene)
    count = len(scene.pages())
    assert count > 1 and len(pages) == count
    assert render_svg(scene) == pages[0]  # page 1 alone: the further pages are not drawn on it
    for n, (page, svg) in enumerate(zip(scene.pages(), pages, strict=True), start=1):
        assert svg == render_svg(page)
        assert f"page {n} of {count}" in svg
        others = [f"page {m} of {count}" for m in range(1, count + 1) if m != n]
        assert not any(other in svg for other in others)


@pytest.fixture(scope="module")
def template() -> Template:
    return make_template()


def test_bounds_of_text_follow_its_anchor() -> None:
    from diagram.drawing.scene import Anchor
    from diagram.drawing.textmetrics import text_width

    w = text_width("SFA-M", 10)
    for anchor, left in (
        (Anchor.START, 100.0),
        (Anchor.MIDDLE, 100 - w / 2),
        (Anchor.END, 100 - w),
    ):
        found = bounds(Text("t", 100, 50, "SFA-M", 10, anchor=anchor))
        assert isinstance(found, Box)
        assert found.x == pytest.approx(left) and found.w == pytest.approx(w)
        assert found.y < 50 < found.bottom
