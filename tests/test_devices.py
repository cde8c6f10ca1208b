"""Stents and grafts on the sheet: graft sites in their bands, their labels, device marks.

The studies here are fictional. Graft surveillance thresholds: SVS practice guideline on
follow-up after vascular procedures (Zierler 2018), table after Bandyk 1988 (graft flow velocity
below 45 cm/s is low).
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from diagram.anatomy import Side
from diagram.assess import assess as assess_study
from diagram.assess.results import Assessment, BandDef
from diagram.drawing.layout import layout
from diagram.drawing.map.devices import GRAFT_STRETCHES
from diagram.drawing.scene import Group, Item, Line, Polygon, Rect, Scene, Text
from diagram.drawing.style import NOT_ASSESSED, default_style
from diagram.drawing.template.mapfile import load_template
from diagram.reading.load import load_study_text

STUDY = """\
format: 1
patient: {name: "Mockup, Device", id: "DEMO-DEV-1", sex: female}
exam: {date: 2026-05-04, site: "Demo Vascular Lab"}
limbs:
  right:
    segments:
      CFA: {psv: 100}
      SFA-P: {psv: 90}
      SFA-M: {psv: 88}
      SFA-D: {psv: 86}
      POP-AK: {psv: 70}
    stents:
      - {from: SFA-M, to: SFA-D, from_cm: 2, length_cm: 10}
  left:
    segments:
      CFA: {psv: 104}
      SFA-P: {occluded: true}
      POP-BK: {psv: 40}
    lesions:
      - {at: SFA-P, occluded: true, length_cm: 27, reconstitutes: POP-AK}
    grafts:
      - conduit: vein
        from: CFA
        to: POP-BK
        samples:
          proximal_anastomosis: {psv: 118}
          proximal: {psv: 62}
          mid: {psv: MID}
          distal_anastomosis: {psv: 325, edv: 60}
"""


def assessed(mid_psv: float = 44) -> Assessment:
    text = STUDY.replace("MID", f"{mid_psv:g}")
    return assess_study(load_study_text(text, "devices.yaml", ".yaml"))


def sheet(assessment: Assessment) -> Scene:
    return layout(assessment, load_template(), version="x")


def walk(items: tuple[Item, ...] | list[Item]) -> list[Item]:
    out: list[Item] = []
    for item in items:
        out.append(item)
        if isinstance(item, Group):
            out += walk(item.items)
    return out


def test_each_graft_site_is_drawn_in_its_band() -> None:
    a = assessed()
    graft = a.limbs[Side.LEFT].grafts[0]
    graded = {site.site: site.band for site in graft.sites}
    drawn = {p.id: p for p in sheet(a).walk() if isinstance(p, Polygon)}
    for site in GRAFT_STRETCHES:
        stretch = drawn[f"graft-left-0-{site}"]
        assert stretch.band == graded.get(site, NOT_ASSESSED), site
    assert drawn["graft-left-0-distal"].band == NOT_ASSESSED  # not sampled: never "low risk"
    assert drawn["graft-left-0-distal_anastomosis"].band != drawn["graft-left-0-mid"].band


def test_graft_sites_get_velocity_labels_anchored_on_the_graft() -> None:
    scene = sheet(assessed())
    labels = {lb.id: lb for lb in scene.label_boxes}
    site = labels["label-left-graft-0-distal_anastomosis"]
    assert site.kind == "graft" and site.text.startswith("Graft dist. anast. 325")
    assert site.side == "left" and site.box.x >= scene.map_box.right  # the left leg's margin
    casing = next(i for i in scene.walk() if i.id == "graft-left-0-casing")
    assert casing is not None
    stretch = next(i for i in scene.walk() if isinstance(i, Polygon) and i.id == "graft-left-0-mid")
    xs = [p[0] for p in stretch.points]
    ys = [p[1] for p in stretch.points]
    mid = labels["label-left-graft-0-mid"]
    assert min(ys) <= mid.anchor[1] <= max(ys)
    assert max(xs) <= mid.anchor[0] <= max(xs) + 1.0  # on the edge facing the margin


@pytest.mark.parametrize(
    ("mid_psv", "low"),
    [
        (44, True),  # < 45 cm/s: low graft flow (SVS 2018 after Bandyk 1988)
        (45, False),  # 45 itself is not below 45
        (60, False),
    ],
)
def test_low_graft_flow_is_shown_on_the_map(mid_psv: float, low: bool) -> None:
    scene = sheet(assessed(mid_psv))
    shown = [lb for lb in scene.label_boxes if lb.kind == "graft-flow"]
    if low:
        assert [lb.text for lb in shown] == [f"Low graft flow {mid_psv:g} cm/s"]
        assert shown[0].anchor == next(
            lb.anchor for lb in scene.label_boxes if lb.id == "label-left-graft-0-mid"
        )  # at the slowest body site
    else:
        assert shown == []


def test_stent_and_graft_bands_carry_their_device_mark() -> None:
    a = assessed()
    scene = sheet(a)
    kinds = {b.id: b.kind for b in a.bands}
    looks = {b.id: b for b in scene.bands}
    mildest = {
        kind: next(b.id for b in a.bands if b.kind == kind and b.rank == 0)
        for kind in ("stent", "graft")
    }
    normal = looks["normal"]
    for kind, band in mildest.items():
        look = looks[band]
        assert (look.tint, look.hatch) == (normal.tint, normal.hatch)  # severity reads the same
        assert look.device == kind and normal.device == ""
    items = walk(list(scene.items))
    ids = {i.id for i in items}
    assert "legend-swatch-normal-device" not in ids
    assert "legend-swatch-normal-device-a" not in ids
    stent_marks = [i for i in items if i.id.startswith(f"legend-swatch-{mildest['stent']}-device")]
    assert len(stent_marks) == 4 and all(isinstance(i, Line) for i in stent_marks)  # with halos
    frame = next(i for i in items if i.id == f"legend-swatch-{mildest['graft']}-device")
    assert isinstance(frame, Rect) and frame.stroke == default_style().graft_ink
    assert {kinds[b] for b in mildest.values()} == {"stent", "graft"}


def test_a_second_band_on_one_look_gets_a_denser_texture() -> None:
    a = assessed()
    assert not any(b.kind == "stent" and b.look == "lt50" for b in a.bands)
    extra = (  # two bands of one set drawn on one house look, as graft high and highest risk
        BandDef("s-mild", "Stent mild", 1, "lt50", "stent", "stent"),
        BandDef("s-milder", "Stent milder", 1, "lt50", "stent", "stent"),
    )
    scene = sheet(replace(a, bands=(*a.bands[:-1], *extra, a.bands[-1])))
    looks = {b.id: b for b in scene.bands}
    high, higher, native = looks["s-mild"], looks["s-milder"], looks["lt50"]
    assert (high.hatch, high.spacing_pt) == (native.hatch, native.spacing_pt)
    assert higher.hatch == native.hatch and higher.spacing_pt < native.spacing_pt
    assert higher.weight_pt > native.weight_pt


def test_low_flow_label_is_bold_and_site_labels_are_not() -> None:
    scene = sheet(assessed())
    texts = {i.text: i for i in scene.walk() if isinstance(i, Text)}
    assert texts["Low graft flow 44 cm/s"].weight == "bold"
    site = next(t for s, t in texts.items() if s.startswith("Graft prox. 62"))
    assert site.weight == "normal"


def test_denser_graft_band_passes_the_greyscale_and_colour_vision_check() -> None:
    # The highest-risk graft band shares the 75-99 look with graft high risk (SVS 2018 after
    # Bandyk 1988 has four graft risks, the house has four disease looks): its denser texture
    # must still read apart from every house band, printed in grey or seen with a CVD.
    from diagram.design.stylecheck import check_style
    from diagram.drawing.map.vessels import band_styles

    a = assessed()
    style = default_style()
    looks = band_styles(a, style)
    graft = [b for b in a.bands if b.kind == "graft" and b.look == "75-99"]
    assert len(graft) == 2, [b.id for b in graft]  # high and highest risk
    denser = looks[graft[1].id]
    assert denser.spacing_pt < looks[graft[0].id].spacing_pt
    report = check_style(replace(style, bands=(*style.bands, denser)))
    assert report.problems == ()
    grey = {s.band: s.grey_mean for s in report.swatches}
    assert grey["occluded"] < grey[denser.id] < grey["75-99"]
