"""Layout: lesion spans along the vessels, margin labels without overlap, the sheet's blocks."""

from __future__ import annotations

import datetime as dt
import itertools
from dataclasses import replace
from typing import Any

import pytest

from diagram.anatomy import SEGMENTS, Side, run_on, vessel_key
from diagram.assess.indices import limb_indices
from diagram.assess.results import (
    Assessment,
    BandDef,
    Finding,
    LesionResult,
    LimbResult,
    Reference,
    SegmentResult,
    Span,
)
from diagram.caution import CAUTION
from diagram.drawing.layout import layout
from diagram.drawing.map.labels import lesion_label, pack_1d, segment_label
from diagram.drawing.paper import PAGES
from diagram.drawing.scene import Group, Line, Polygon, Rect, Scene, Text
from diagram.drawing.template.geometry import PathGeometry
from diagram.drawing.template.mapfile import Template, Vessel
from diagram.reading.study import Exam, Graft, Limb, LimbPressures, Patient, Pressures, Stent, Study

# ----------------------------------------------------------------------------- a small template

# Right leg centre lines on the viewer's left (x < 200); the left leg is the mirror image.
# (segment, start, end, diameter mm); diameters after Lorbeer 2018 upper reference values.
_RIGHT = (
    ("CIA", (200, 100), (150, 160), 11.8),
    ("IIA", (150, 160), (172, 225), 6.0),
    ("EIA", (150, 160), (130, 260), 10.3),
    ("CFA", (130, 260), (128, 300), 10.2),
    ("PFA", (128, 300), (104, 400), 6.0),
    ("SFA-P", (128, 300), (132, 390), 8.0),
    ("SFA-M", (132, 390), (136, 480), 7.7),
    ("SFA-D", (136, 480), (140, 570), 7.7),
    ("POP-AK", (140, 570), (142, 650), 6.9),
    ("POP-BK", (142, 650), (142, 710), 6.9),
    ("TPT", (142, 710), (146, 732), 5.0),
    ("ATA-P", (142, 710), (118, 800), 4.2),
    ("ATA-M", (118, 800), (114, 870), 4.2),
    ("ATA-D", (114, 870), (112, 940), 4.2),
    ("DPA", (112, 940), (104, 985), 3.0),
    ("PTA-P", (146, 732), (164, 800), 3.8),
    ("PTA-M", (164, 800), (168, 870), 3.8),
    ("PTA-D", (168, 870), (172, 940), 3.8),
    ("PLA", (172, 940), (180, 985), 2.5),
    ("PER-P", (146, 732), (141, 800), 4.0),
    ("PER-M", (141, 800), (139, 860), 4.0),
    ("PER-D", (139, 860), (137, 915), 4.0),
)


def _line(a: tuple[float, float], b: tuple[float, float]) -> PathGeometry:
    return PathGeometry.from_d(f"M {a[0]} {a[1]} L {b[0]} {b[1]}")


def make_template() -> Template:
    """Return a bilateral straight-line map in a 400 x 1000 viewBox."""
    vessels = {"AO": Vessel("AO", None, "AO", 6.0, 16.0, _line((200, 40), (200, 100)))}
    for seg, a, b, diameter in _RIGHT:
        for side, mirror in (("right", False), ("left", True)):
            pa = (400 - a[0], a[1]) if mirror else a
            pb = (400 - b[0], b[1]) if mirror else b
            key = vessel_key(side, seg)
            vessels[key] = Vessel(key, side, seg, SEGMENTS[seg].length_cm, diameter, _line(pa, pb))
    outline = (
        "M 60 20 L 340 20 L 360 300 L 300 990 L 220 990 L 200 330 L 180 990 L 100 990 L 40 300 Z"
    )
    return Template("test", "test.svg", (0.0, 0.0, 400.0, 1000.0), vessels, (outline,))


# ----------------------------------------------------------------------------- assessments by hand

BANDS = (
    BandDef("normal", "Normal", 0),
    BandDef("lt50", "<50%", 1),
    BandDef("50-74", "50-74%", 2),
    BandDef("75-99", "75-99%", 3),
    BandDef("occluded", "Occluded", 4),
    BandDef("not-assessed", "Not assessed", -1),
)


def spans(at: str, from_cm: float, length_cm: float) -> tuple[Span, ...]:
    """Return the stretch of a lesion over the segments it runs into (nominal lengths)."""
    out = []
    start, left = from_cm, length_cm
    for seg in run_on(at):
        total = SEGMENTS[seg].length_cm
        end = min(total, start + left)
        out.append(Span(seg, start, end, start / total, end / total))
        left -= end - start
        start = 0.0
        if left <= 1e-9:
            break
    return tuple(out)


def lesion(
    side: Side,
    index: int,
    at: str,
    band: str,
    *,
    from_cm: float = 1.0,
    length_cm: float = 2.0,
    psv: float | None = None,
    edv: float | None = None,
    vr: float | None = None,
    reconstitutes: str | None = None,
) -> LesionResult:
    occluded = band == "occluded"
    recon = None
    if reconstitutes:
        recon = Span(
            reconstitutes,
            1.0,
            1.0,
            1.0 / SEGMENTS[reconstitutes].length_cm,
            1.0 / SEGMENTS[reconstitutes].length_cm,
        )
    ref = Reference(90.0, "segment", "CFA") if vr is not None else None
    return LesionResult(
        index,
        side,
        at,
        band,
        psv,
        edv,
        vr,
        "computed" if vr else "none",
        ref,
        length_cm,
        from_cm,
        occluded,
        reconstitutes,
        recon,
        spans(at, from_cm, length_cm),
        "test",
    )


def segment(side: Side, seg: str, band: str, psv: float | None) -> SegmentResult:
    return SegmentResult(
        side, seg, band, psv, None, None, None, "triphasic", (), "test", band != "not-assessed"
    )


def study(**pressures: LimbPressures) -> Study:
    limbs = {
        Side.RIGHT: Limb(Side.RIGHT, stents=(Stent("SFA-D", "POP-AK", 2.0, 8.0),)),
        Side.LEFT: Limb(Side.LEFT, grafts=(Graft("vein", "CFA", "POP-BK"),)),
    }
    return Study(
        source="test.yaml",
        patient=Patient("Example, Pat", "T-0001", dt.date(1950, 2, 3), "female"),
        exam=Exam(
            date=dt.date(2026, 11, 20),
            accession="ACC-1",
            site="Example Vascular Lab",
            indication="Bilateral calf claudication at 100 m",
        ),
        pressures=Pressures(142, 136, **pressures),
        limbs=limbs,
    )


def crowded(**pressures: LimbPressures) -> Assessment:
    """Every segment of both legs with a PSV, and several lesions on each side."""
    lesions = {
        Side.RIGHT: (
            lesion(Side.RIGHT, 0, "EIA", "50-74", psv=330, edv=70, vr=3.1),
            lesion(
                Side.RIGHT, 1, "SFA-P", "occluded", from_cm=6, length_cm=21, reconstitutes="POP-AK"
            ),
            lesion(Side.RIGHT, 2, "ATA-M", "75-99", psv=390, edv=40, vr=4.2),
            lesion(Side.RIGHT, 3, "TPT", "lt50", psv=150, vr=None),
            lesion(Side.RIGHT, 4, "PTA-P", "50-74", psv=180, edv=20, vr=2.4, length_cm=1),
        ),
        Side.LEFT: (
            lesion(Side.LEFT, 0, "CFA", "lt50", psv=160, edv=20, vr=1.5),
            lesion(Side.LEFT, 1, "SFA-M", "75-99", from_cm=3, length_cm=4, psv=390, edv=40, vr=4.2),
            lesion(
                Side.LEFT, 2, "POP-BK", "occluded", from_cm=2, length_cm=6, reconstitutes="PTA-P"
            ),
            lesion(Side.LEFT, 3, "PER-M", "50-74", psv=200, vr=2.1),
        ),
    }
    limbs = {}
    for side in Side:
        segs = {}
        for k, seg in enumerate(SEGMENTS):
            if seg == "AO" and side is Side.LEFT:
                continue
            band = ("normal", "lt50", "50-74", "not-assessed")[k % 4]
            segs[seg] = segment(side, seg, band, 40.0 + 3 * k)
        limbs[side] = LimbResult(side, segs, lesions[side])
    warnings = tuple(
        Finding(
            "angle",
            Side.LEFT,
            "SFA-M",
            f"left SFA-M sample {k}: angle 66° is above 60°; the velocity may be overestimated",
        )
        for k in range(9)
    )
    measured = study(**pressures)
    return Assessment(
        study=measured,
        indices={side: limb_indices(measured.pressures, side) for side in Side},
        criteria_name="native",
        criteria_title="Native arteries, velocity ratio",
        criteria_source="test",
        bands=BANDS,
        limbs=limbs,
        warnings=warnings,
    )


def legend_rule_y(scene: Scene) -> float:
    rule = next(i for i in scene.walk() if i.id == "legend-rule")
    assert isinstance(rule, Line)
    return rule.points[0][1]


def texts(scene: Scene) -> list[str]:
    return [item.text for item in scene.walk() if isinstance(item, Text)]


@pytest.fixture(scope="module")
def template() -> Template:
    return make_template()


# ----------------------------------------------------------------------------- 1-D packing


@pytest.mark.parametrize(
    ("centres", "expected"),
    [
        ([50.0], [45.0]),  # free: centred on its wish
        ([50.0, 80.0], [45.0, 75.0]),  # far apart: both stay
        ([50.0, 55.0], [42.0, 53.0]),  # clash: the pair straddles the mean wish (52.5)
        ([50.0, 50.0, 50.0], [34.0, 45.0, 56.0]),  # three on one spot: centred stack
        ([2.0], [0.0]),  # above the top: held at the top
        ([99.0, 99.5], [79.0, 90.0]),  # past the bottom: pulled back up
        ([80.0, 10.0], [75.0, 5.0]),  # order of input is kept in the output
    ],
)
def test_pack_1d_table(centres: list[float], expected: list[float]) -> None:
    tops = pack_1d(centres, [10.0] * len(centres), 1.0, 0.0, 100.0)
    assert tops == pytest.approx(expected)


def test_pack_1d_never_overlaps_and_stays_in_bounds() -> None:
    import random

    rng = random.Random(7)
    for _ in range(200):
        n = rng.randint(1, 40)
        centres = [rng.uniform(0, 600) for _ in range(n)]
        heights = [rng.uniform(6, 14) for _ in range(n)]
        tops = pack_1d(centres, heights, 1.5, 0.0, 700.0)
        spans = sorted(zip(tops, heights, strict=True))
        for (t0, h0), (t1, _) in itertools.pairwise(spans):
            assert t1 >= t0 + h0 + 1.5 - 1e-9
        assert min(tops) >= -1e-9
        assert max(t + h for t, h in zip(tops, heights, strict=True)) <= 700.0 + 1e-9


def test_pack_1d_keeps_the_anchor_order() -> None:
    tops = pack_1d([30.0, 10.0, 20.0, 21.0], [8.0] * 4, 1.0, 0.0, 200.0)
    assert sorted(range(4), key=lambda i: tops[i]) == [1, 2, 3, 0]


def test_pack_1d_places_many_labels_in_one_cluster_apart() -> None:
    """Worst case: everything wanted in one place (its time is in the labels benchmark)."""
    centres = [float(i % 50) for i in range(20000)]
    tops = pack_1d(centres, [1.0] * 20000, 0.0, 0.0, 1e6)
    assert len(set(tops)) == 20000
    ordered = sorted(tops)
    assert all(b - a >= 1.0 - 1e-9 for a, b in itertools.pairwise(ordered))


# ----------------------------------------------------------------------------- label texts


def _les(**kw: Any) -> LesionResult:
    base = lesion(Side.LEFT, 0, "SFA-M", "50-74")
    return replace(base, **kw)


@pytest.mark.parametrize(
    ("kw", "text"),
    [
        ({"psv": 390.0, "edv": 40.0, "vr": 4.2}, "PSV 390 / EDV 40 / Vr 4.20"),  # as graded
        ({"psv": 390.0, "edv": None, "vr": 4.24}, "PSV 390 / Vr 4.24"),
        ({"psv": 150.5, "edv": None, "vr": None}, "PSV 150.5 / Vr —"),
        ({"psv": None, "edv": None, "vr": None}, "Vr —"),
        ({"psv": 200.0, "edv": 12.0, "vr": 2.0}, "PSV 200 / EDV 12 / Vr 2.00"),  # boundary value
        ({"psv": 200.0, "edv": None, "vr": 1.96}, "PSV 200 / Vr 1.96"),  # never rounded up to 2
        ({"occluded": True, "length_cm": 6.0, "reconstitutes": "POP-BK"}, "Occl. 6 cm → POP-BK"),
        ({"occluded": True, "length_cm": 6.5, "reconstitutes": None}, "Occl. 6.5 cm"),
        ({"occluded": True, "length_cm": None, "reconstitutes": None}, "Occl."),
    ],
)
def test_lesion_label(kw: dict[str, Any], text: str) -> None:
    assert lesion_label(_les(**kw)) == text


@pytest.mark.parametrize(
    ("seg", "psv", "text"), [("SFA-P", 88.0, "SFA-P 88"), ("PTA-D", 41.25, "PTA-D 41.2")]
)
def test_segment_label(seg: str, psv: float, text: str) -> None:
    assert segment_label(seg, psv) == text


# ----------------------------------------------------------------------------- crowded sheets


@pytest.mark.parametrize("page", sorted(PAGES))
def test_no_two_label_boxes_intersect(template: Template, page: str) -> None:
    scene = layout(crowded(), template, page=page, version="0.0.0")
    boxes = scene.label_boxes
    # every segment with a PSV (both legs and the aorta), every lesion, every reconstitution
    assert len(boxes) == 45 + 9 + 2
    for i, a in enumerate(boxes):
        for b in boxes[i + 1 :]:
            assert not a.box.intersects(b.box), (a.text, b.text)


@pytest.mark.parametrize("page", sorted(PAGES))
def test_labels_lie_in_the_margins(template: Template, page: str) -> None:
    scene = layout(crowded(), template, page=page, version="0.0.0")
    vessels, area = scene.vessel_box, scene.map_box
    legend_top = legend_rule_y(scene)
    for lb in scene.label_boxes:
        assert not lb.box.intersects(vessels), lb.text
        assert lb.box.x >= 0 and lb.box.right <= scene.width_pt
        assert area.y <= lb.box.y and lb.box.bottom <= legend_top
        if lb.side == "right":  # the patient's right leg is on the viewer's left
            assert lb.box.right <= area.x
        else:
            assert lb.box.x >= area.right


def test_each_leg_labels_its_own_margin(template: Template) -> None:
    scene = layout(crowded(), template, version="0.0.0")
    for lb in scene.label_boxes:
        if lb.target != "AO":
            assert lb.target.startswith(lb.side + "/"), lb
    ao = [lb for lb in scene.label_boxes if lb.target == "AO"]
    counts = {
        s: sum(1 for lb in scene.label_boxes if lb.side == s and lb.target != "AO")
        for s in ("right", "left")
    }
    assert len(ao) == 1 and ao[0].side == min(counts, key=lambda s: (counts[s], s == "right"))


def test_leader_lines_run_from_the_label_to_its_vessel(template: Template) -> None:
    scene = layout(crowded(), template, version="0.0.0")
    leaders = {item.id: item for item in scene.walk() if isinstance(item, Line)}
    for lb in scene.label_boxes:
        line = leaders[f"{lb.id}-leader"]
        start, end = line.points[0], line.points[-1]
        assert start[0] in (pytest.approx(lb.box.x), pytest.approx(lb.box.right))
        assert lb.box.y <= start[1] <= lb.box.bottom
        assert end == lb.anchor
        assert scene.vessel_box.x - 0.01 <= end[0] <= scene.vessel_box.right + 0.01


def test_many_labels_spill_into_a_second_column(template: Template) -> None:
    a = crowded()
    extra = tuple(
        lesion(Side.RIGHT, 10 + k, seg, "lt50", psv=150 + k, vr=1.5, from_cm=0.5, length_cm=1)
        for k, seg in enumerate([s for s in SEGMENTS if s != "AO" and s != "PER-D"] * 2)
    )
    right = replace(a.limbs[Side.RIGHT], lesions=a.limbs[Side.RIGHT].lesions + extra)
    scene = layout(replace(a, limbs={**a.limbs, Side.RIGHT: right}), template, version="0.0.0")
    xs = {round(lb.box.right, 3) for lb in scene.label_boxes if lb.side == "right"}
    assert len(xs) >= 2  # two columns
    legend_top = legend_rule_y(scene)
    assert max(lb.box.bottom for lb in scene.label_boxes) <= legend_top
    boxes = scene.label_boxes
    for i, p in enumerate(boxes):
        for q in boxes[i + 1 :]:
            assert not p.box.intersects(q.box)
        assert not p.box.intersects(scene.vessel_box)


# ----------------------------------------------------------------------------- the map


def test_lesion_span_is_placed_by_arc_length(template: Template) -> None:
    scene = layout(crowded(), template, version="0.0.0")
    fit_scale = scene.map_box.w / 400.0
    # left SFA-M lesion 1: 3 to 7 cm of a 9 cm segment drawn from y 390 to 480 (straight line)
    poly = next(i for i in scene.walk() if i.id == "lesion-left-1-span-0")
    assert isinstance(poly, Polygon)
    ys = [p[1] for p in poly.points]
    top = scene.map_box.y + (390 + 90 * 3 / 9) * fit_scale
    bottom = scene.map_box.y + (390 + 90 * 7 / 9) * fit_scale
    slack = 0.05 * 8 * 0.8  # the tube's half width times the vessel's small slope
    assert min(ys) == pytest.approx(top, abs=slack + 0.01)
    assert max(ys) == pytest.approx(bottom, abs=slack + 0.01)


def test_every_vessel_is_drawn_in_its_band(template: Template) -> None:
    a = crowded()
    scene = layout(a, template, version="0.0.0")
    tubes = {i.id: i for i in scene.walk() if isinstance(i, Polygon) and i.id.startswith("vessel")}
    assert len(tubes) == len(template.vessels)
    band = a.limbs[Side.LEFT].segments["SFA-D"].band
    tube = next(t for t in tubes.values() if t.id.startswith("vessel-left_SFA-D"))
    assert tube.band == band


def test_unassessed_vessels_are_drawn_not_assessed(template: Template) -> None:
    a = crowded()
    scene = layout(replace(a, limbs={Side.RIGHT: a.limbs[Side.RIGHT]}), template, version="x")
    left = [i for i in scene.walk() if isinstance(i, Polygon) and i.id.startswith("vessel-left")]
    assert left and all(t.band == "not-assessed" for t in left)
    assert all(t.dash for t in left)  # the dashed edge


def test_occlusion_reconstitution_and_ticks(template: Template) -> None:
    scene = layout(crowded(), template, version="0.0.0")
    ids = {i.id for i in scene.walk()}
    assert {"lesion-right-1-reconstitution", "lesion-left-2-reconstitution"} <= ids
    assert {"lesion-right-1-tick-start", "lesion-right-1-tick-end"} <= ids
    occl = next(i for i in scene.walk() if i.id == "lesion-right-1-span-0")
    assert isinstance(occl, Polygon) and occl.band == "occluded"
    assert "reconst." in texts(scene)


def part_of(template: Template, keep: Any) -> Template:
    """Return a template holding only the vessels ``keep(vessel)`` accepts (a partial map)."""
    vessels = {k: v for k, v in template.vessels.items() if keep(v)}
    return Template("part", "part.svg", template.viewbox, vessels, template.silhouette)


def test_a_missing_vessel_is_listed_not_refused(template: Template) -> None:
    part = part_of(template, lambda v: v.key != "left/PER-M")
    scene = layout(crowded(), part, version="0.0.0")
    ids = {i.id for i in scene.walk()}
    assert not any(i.startswith("vessel-left_PER-M") for i in ids)
    # left lesion 3 is a PER-M stenosis: not drawn, and said so
    assert "lesion-left-3-span-0" not in ids
    assert "• not drawn: left PER-M lesion (not on this map)" in texts(scene)
    assert not any(lb.target == "left/PER-M" for lb in scene.label_boxes)


def test_one_leg_map_draws_that_leg_and_lists_the_other(template: Template) -> None:
    below_groin = set(SEGMENTS) - {"AO", "CIA", "IIA", "EIA"}
    part = part_of(template, lambda v: v.side == "right" and v.segment in below_groin)
    scene = layout(crowded(), part, version="0.0.0")
    tubes = [i for i in scene.walk() if isinstance(i, Polygon) and i.id.startswith("vessel-")]
    assert len(tubes) == len(below_groin)
    assert all(lb.side == "right" and lb.target in part.vessels for lb in scene.label_boxes)
    shown = texts(scene)
    # crowded(): 17 of the left leg's 22 segments assessed, 4 lesions, a vein graft
    assert (
        "• not drawn: the left leg (17 segments, 4 lesions, 1 graft); this map has no left leg"
        in shown
    )
    # above this map's top (the CFA): the aorta, the right iliac samples and the EIA stenosis
    assert (
        "• not drawn: AO Normal; right CIA <50%; right IIA 50-74%; right EIA lesion (not on this map)"
        in shown
    )
    # the right SFA occlusion is drawn whole, with both ticks and its reconstitution
    ids = {i.id for i in scene.walk()}
    assert {"lesion-right-1-tick-start", "lesion-right-1-tick-end"} <= ids
    assert "side-mark-right" in ids and "side-mark-left" not in ids


def test_a_lesion_running_off_the_map_has_no_tick_where_the_map_ends(template: Template) -> None:
    a = crowded()
    run_in = lesion(Side.RIGHT, 0, "EIA", "50-74", from_cm=8, length_cm=4, psv=330, vr=3.1)
    right = replace(a.limbs[Side.RIGHT], lesions=(run_in,))
    part = part_of(template, lambda v: v.side == "right" and v.segment not in ("CIA", "IIA", "EIA"))
    scene = layout(replace(a, limbs={**a.limbs, Side.RIGHT: right}), part, version="x")
    ids = {i.id for i in scene.walk()}
    assert "lesion-right-0-span-0" in ids  # the 2 cm in the CFA
    assert "lesion-right-0-tick-end" in ids and "lesion-right-0-tick-start" not in ids
    assert "right EIA lesion (the part in EIA)" in " ".join(texts(scene))


def test_a_map_without_the_studys_legs_is_refused(template: Template) -> None:
    from diagram.errors import TemplateError

    a = crowded()
    limbs = {Side.LEFT: Limb(Side.LEFT, grafts=a.study.limb(Side.LEFT).grafts)}
    left_only = replace(
        a, study=replace(a.study, limbs=limbs), limbs={Side.LEFT: a.limbs[Side.LEFT]}
    )
    right_map = part_of(template, lambda v: v.side == "right")
    with pytest.raises(TemplateError, match="draws neither leg the study reports"):
        layout(left_only, right_map, version="0.0.0")
    layout(left_only, part_of(template, lambda v: v.side == "left"), version="0.0.0")


# ----------------------------------------------------------------------------- sheet furniture


def test_header_shows_only_what_the_study_has(template: Template) -> None:
    a = crowded()
    full = texts(layout(a, template, version="0.0.0"))
    for word in (
        "Example Vascular Lab",
        "Example, Pat",
        "T-0001",
        "1950-02-03",
        "female",
        "2026-11-20",
        "ACC-1",
        "Bilateral calf claudication at 100 m",
    ):
        assert word in full
    bare = replace(a.study, patient=Patient(), exam=Exam())
    shown = texts(layout(replace(a, study=bare), template, version="0.0.0"))
    for word in ("Patient", "ID", "Born", "Sex", "Exam", "Accession", "Indication"):
        assert word not in shown


def test_map_page_has_no_header_but_keeps_caution_and_footer(template: Template) -> None:
    scene = layout(crowded(), template, page="map", version="0.0.0")
    shown = texts(scene)
    assert "Example, Pat" not in shown and "Example Vascular Lab" not in shown
    assert "Measurement notes" not in shown
    assert " ".join(t for t in shown if t and t[0] not in "RL").count("Schematic aid") == 1
    assert "limbchart 0.0.0" in shown


def test_caution_and_footer(template: Template) -> None:
    scene = layout(crowded(), template, version="9.9.9", generated_note="drawn 2026-12-01")
    caution = [i.text for i in scene.walk() if isinstance(i, Text) and i.id.startswith("caution")]
    assert " ".join(caution) == CAUTION
    shown = texts(scene)
    assert "Criteria: Native arteries, velocity ratio (native)" in shown
    assert "drawn 2026-12-01 · limbchart 9.9.9" in shown


def test_warnings_block_shows_the_first_few_then_a_count(template: Template) -> None:
    scene = layout(crowded(), template, version="0.0.0")
    shown = texts(scene)
    assert "Measurement notes" in shown
    assert sum(1 for t in shown if t.startswith("• ")) == 6
    assert "+3 more in the results file" in shown


def test_legend_lists_every_band_and_the_symbols_in_use(template: Template) -> None:
    scene = layout(crowded(), template, version="0.0.0")
    swatches = {
        i.band for i in scene.walk() if isinstance(i, Rect) and i.id.startswith("legend-swatch")
    }
    assert swatches == {b.id for b in BANDS}
    shown = texts(scene)
    for label in (
        "Normal",
        "<50%",
        "50-74%",
        "75-99%",
        "Occluded",
        "Not assessed",
        "reconstitution",
        "stent",
        "bypass graft",
        "lesion extent",
    ):
        assert label in shown


def test_legend_leaves_out_symbols_not_in_use(template: Template) -> None:
    a = crowded()
    bare_limbs = {s: Limb(s) for s in Side}
    limbs = {s: replace(r, lesions=()) for s, r in a.limbs.items()}
    scene = layout(
        replace(a, study=replace(a.study, limbs=bare_limbs), limbs=limbs), template, version="0.0.0"
    )
    shown = texts(scene)
    for label in ("reconstitution", "stent", "bypass graft", "lesion extent"):
        assert label not in shown


def test_pressure_boxes_only_with_ankle_or_toe_pressures(template: Template) -> None:
    assert layout(crowded(), template, version="x").pressure_regions == ()
    scene = layout(crowded(right=LimbPressures(120, 110, 80)), template, version="x")
    right, left = scene.pressure_regions  # a leg without pressures says "not measured"
    assert (right.side, left.side) == ("right", "left")
    assert right.box.right <= scene.width_pt / 2 <= left.box.x  # the right leg on the viewer's left
    assert right.box.y >= scene.map_box.bottom
    for lb in scene.label_boxes:
        assert not lb.box.intersects(right.box) and not lb.box.intersects(left.box)
    shown = texts(scene)
    # 120 / 142 = 0.845 -> 0.85, abnormal (<= 0.90), mild-moderate: 2016 AHA/ACC PAD guideline
    assert "ABI 0.85 abnormal, mild\u2013moderate" in shown
    assert "· PT 120 / brachial 142 mmHg" in shown  # the basis beside the value
    assert "ABI not measured" in shown and "· no ankle pressure" in shown


def test_band_of_another_set_is_drawn_with_its_look(template: Template) -> None:
    a = crowded()
    bands = (*a.bands[:-1], BandDef("isr-50-69", "ISR 50-69%", 2, "50-74", "stent"), a.bands[-1])
    les = replace(a.limbs[Side.LEFT].lesions[0], band="isr-50-69")
    left = replace(a.limbs[Side.LEFT], lesions=(les, *a.limbs[Side.LEFT].lesions[1:]))
    scene = layout(
        replace(a, bands=bands, limbs={**a.limbs, Side.LEFT: left}), template, version="x"
    )
    style = {b.id: b for b in scene.bands}
    assert style["isr-50-69"].hatch == style["50-74"].hatch
    assert style["isr-50-69"].label == "ISR 50-69%"


def test_unknown_page_is_refused(template: Template) -> None:
    with pytest.raises(ValueError, match="a5"):
        layout(crowded(), template, page="a5", version="x")


def test_layout_is_deterministic_with_unique_ids(template: Template) -> None:
    one = layout(crowded(), template, version="0.0.0")
    two = layout(crowded(), template, version="0.0.0")
    assert one == two
    ids = [item.id for item in one.walk()]
    assert len(ids) == len(set(ids))


@pytest.mark.parametrize(("page", "size"), [("a4", (595.28, 841.89)), ("letter", (612, 792))])
def test_page_sizes(template: Template, page: str, size: tuple[float, float]) -> None:
    scene = layout(crowded(), template, page=page, version="x")
    assert (scene.width_pt, scene.height_pt) == pytest.approx(size, abs=0.01)  # ISO 216; ANSI


def test_footer_names_every_criteria_set_used(template: Template) -> None:
    a = replace(
        crowded(),
        criteria_used=(
            ("native", "Native arteries, velocity ratio", "shipped"),
            ("stent", "In-stent restenosis", "shipped"),
        ),
    )
    shown = texts(layout(a, template, version="x"))
    assert (
        "Criteria: Native arteries, velocity ratio (native); In-stent restenosis (stent)" in shown
    )


def test_stent_mesh_lies_over_its_segments(template: Template) -> None:
    scene = layout(crowded(), template, version="x")
    groups = [i for i in scene.walk() if isinstance(i, Group) and i.role == "stent"]
    # right stent: from 2 cm into SFA-D (9 cm, drawn y 480-570) for 8 cm, so 1 cm into POP-AK
    # (9 cm, drawn y 570-650)
    assert [g.id for g in groups] == ["stent-right-0-0", "stent-right-0-1"]
    scale = scene.map_box.h / 1000
    slack = 0.05 * 4  # the mesh's sideways reach times the vessels' small slope
    for group, (y0, y1) in zip(groups, ((500, 570), (570, 570 + 80 / 9)), strict=True):
        ys = [p[1] for item in group.items if isinstance(item, Line) for p in item.points]
        assert min(ys) == pytest.approx(scene.map_box.y + y0 * scale, abs=slack + 0.3)
        assert max(ys) == pytest.approx(scene.map_box.y + y1 * scale, abs=slack + 0.3)


def test_empty_study_draws_every_vessel_not_assessed(template: Template) -> None:
    a = crowded()
    empty = replace(
        a,
        study=replace(a.study, limbs={}, pressures=Pressures()),
        limbs={},
        warnings=(),
    )
    scene = layout(empty, template, version="x")
    tubes = [i for i in scene.walk() if isinstance(i, Polygon)]
    assert len(tubes) == len(template.vessels)
    assert {t.band for t in tubes} == {"not-assessed"}
    assert scene.label_boxes == () and scene.pressure_regions == ()
    assert "Measurement notes" not in texts(scene)
