"""What the sheet says about unseen levels, runoff, provisional grades, grafts and band boundaries."""

from __future__ import annotations

import pytest

from diagram.anatomy import SEGMENT_IDS, Side
from diagram.assess import assess
from diagram.assess.results import Assessment
from diagram.drawing.layout import _boundaries
from diagram.drawing.map.vessels import band_styles as layout_bands
from diagram.drawing.sheet.tables import Entry, Table, planning_table
from diagram.drawing.style import default_style
from diagram.reading.study import (
    Exam,
    Graft,
    Limb,
    Patient,
    Pressures,
    Sample,
    SegmentFinding,
    Study,
)


def study(missing: tuple[str, ...] = (), grafts: tuple[Graft, ...] = ()) -> Assessment:
    """A normal left leg (every segment PSV 100 unless missing); the right leg not examined."""
    segments = {s: SegmentFinding(id=s, psv=100.0) for s in SEGMENT_IDS if s not in missing}
    limb = Limb(side=Side.LEFT, segments=segments, grafts=grafts)
    return assess(
        Study(
            source="t.yaml",
            patient=Patient(),
            exam=Exam(),
            pressures=Pressures(),
            limbs={Side.LEFT: limb},
        )
    )


def text(entry: Entry) -> str:
    return "".join(run.text for run in entry.runs)


def cell(a: Assessment, row: str, side: Side = Side.LEFT) -> str:
    bands = layout_bands(a, default_style())
    table: Table = planning_table(a.planning, bands, {s: a.limbs[s].grafts for s in Side})
    found = next(r for r in table.rows if r.label == row)
    return " | ".join(text(e) for e in found.cells[0 if side is Side.RIGHT else 1])


# No "Normal" over levels that were not examined (common practice: report only what was seen).
@pytest.mark.parametrize(
    ("missing", "words"),
    [
        ((), "Normal · no disease \u226550%"),
        (
            ("AO", "CIA"),
            "Partly assessed · Normal where seen · no disease \u226550% · 2 of 5 not "
            "assessed: AO, CIA",
        ),
        (
            ("AO", "CIA", "IIA", "EIA", "CFA"),
            "Not assessed · 5 of 5 segments: AO, CIA, IIA, EIA, CFA",
        ),
    ],
)
def test_inflow_level_says_how_much_was_seen(missing: tuple[str, ...], words: str) -> None:
    assert cell(study(missing), "Inflow (aorta to CFA)") == words


# Runoff headline (SVS 1997 standards count patent vessels to the ankle): unseen is not "0 of 3".
@pytest.mark.parametrize(
    ("missing", "head"),
    [
        ((), "3 of 3 patent to the ankle"),
        (("PER-M", "PER-D"), "2 patent, 1 not assessed to the ankle"),
        (
            tuple(f"{v}-{t}" for v in ("ATA", "PTA", "PER") for t in "MD"),
            "Not assessed to the ankle",
        ),
    ],
)
def test_runoff_headline(missing: tuple[str, ...], head: str) -> None:
    assert cell(study(missing), "Runoff (SVS)").startswith(head)


def test_grades_on_unseen_segments_say_provisional() -> None:
    a = study(("SFA-M",))
    assert cell(a, "FP grade (GLASS)").startswith("FP0 provisional · ")
    assert not cell(study(), "FP grade (GLASS)").startswith("FP0 provisional")


# SVS 2018 graft surveillance, after Bandyk 1988: the graft row names the risk and flags a graft
# flow velocity below 45 cm/s; 45 itself is not flagged.
@pytest.mark.parametrize(("flow", "flagged"), [(44, True), (45, False)])
def test_graft_row_shows_risk_and_low_flow(flow: float, flagged: bool) -> None:
    graft = Graft(
        conduit="vein",
        from_="CFA",
        to="POP-BK",
        samples={"mid": Sample(psv=flow), "distal_anastomosis": Sample(psv=420, vr=6)},
    )
    row = cell(study(grafts=(graft,)), "Bypass graft")
    risk = "Graft highest risk" if flagged else "Graft high risk"
    assert row.startswith(f"vein CFA \u2192 POP-BK: {risk}")
    assert (f"graft flow velocity {flow} cm/s, below 45" in row) is flagged


def test_legend_states_which_side_of_each_boundary_goes_higher() -> None:
    (line,) = _boundaries(study())
    # Jager 1985 ">= 2.0"; Polak 2004 ">= 4": the boundary value belongs to the higher band
    assert "native: <50% Vr \u2265 1.3; 50-74% Vr \u2265 2; 75-99% Vr \u2265 4" in line
    assert line.startswith("Band thresholds (\u2265: a value on the boundary goes to the higher")
