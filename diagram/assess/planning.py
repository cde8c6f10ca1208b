"""Planning summary of one leg: disease per level, occlusions, runoff, GLASS grades and stage, TASC.

Sources (clinical-values.md): GLASS in the Global Vascular Guidelines, Conte MS et al., J Vasc
Surg 2019;69:3S (target path, calcification, inflow apart confirmed; grades and stage recalled);
TASC II, Norgren L et al., J Vasc Surg 2007;45:S5 (femoropopliteal, confirmed); SVS standards,
Rutherford RB et al., J Vasc Surg 1997;26:517 (runoff scale and the added 1, confirmed).

Choices the sources leave open (assumptions are also listed in each result):

* Disease is severity >= 2 (>= 50%) on the common scale, occlusion 4. Lengths are the extents the
  map draws, a union per segment. A segment >= 50% from its own sample with no lesion behind it
  counts as a 1 cm stenosis at its start, or occluded over its nominal length (an assumption).
* GLASS lengths in the guideline's cm (1/3 of the SFA ~ 10 cm); tibial fractions of the nominal
  length of the vessel's thirds; for PTA and PER targets the TPT is on the path and counts.
* "calcified" plaque on a lesion >= 50% is taken as severe calcification (an assumption).
* Default target: the lowest IP grade; ties go to in-line flow to the foot (ATA into a patent
  DPA, PTA into patent plantar arteries; the peroneal ends above the ankle), then fewer occluded
  and diseased cm, then the order ATA, PTA, PER (arbitrary, only to be deterministic).
* Runoff: a tibial artery is patent to the ankle when every segment of its path (TPT included for
  PTA and PER) was assessed and none is occluded; one not fully assessed is never counted patent.
* TASC II: rule A is applied to SFA lesions (a popliteal stenosis is B); a lesion or set of lesions
  that no rule describes (say one stenosis of 16 cm) is classed C and says so.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from diagram.anatomy import SEGMENTS

# The summary's dataclasses live in diagram.assess.plan_results; they stay importable from here.
from diagram.assess.plan_results import LevelSummary as LevelSummary
from diagram.assess.plan_results import Occlusion as Occlusion
from diagram.assess.plan_results import PlanLevel as PlanLevel
from diagram.assess.plan_results import Planning as Planning
from diagram.assess.plan_results import RunoffVessel as RunoffVessel
from diagram.assess.plan_results import VesselGrade as VesselGrade
from diagram.assess.results import LimbResult
from diagram.assess.stretches import CALCIFICATION_ASSUMPTION as CALCIFICATION_ASSUMPTION
from diagram.assess.stretches import Extent as _Extent
from diagram.assess.stretches import cm_text as _cm
from diagram.assess.stretches import collect_extents as _extents
from diagram.assess.stretches import union_cm as _union_cm
from diagram.criteria import LOOK_SEVERITY, SIGNIFICANT_SEVERITY, CriteriaSets
from diagram.reading.study import Study

OCCLUDED = LOOK_SEVERITY["occluded"]
_EPS = 1e-6

INFLOW_PATH = ("AO", "CIA", "EIA", "CFA")  # in line to the leg; the internal iliac is not
SFA = ("SFA-P", "SFA-M", "SFA-D")
POPLITEAL = ("POP-AK", "POP-BK")
TIBIALS = ("ATA", "PTA", "PER")
LEVEL_SEGMENTS: dict[PlanLevel, tuple[str, ...]] = {
    PlanLevel.INFLOW: ("AO", "CIA", "IIA", "EIA", "CFA"),
    PlanLevel.FEMOROPOPLITEAL: ("PFA", *SFA, *POPLITEAL),
    PlanLevel.INFRAPOPLITEAL: ("TPT", *(f"{v}-{t}" for v in TIBIALS for t in "PMD")),
    PlanLevel.PEDAL: ("DPA", "PLA"),
}
PEDAL_CONTINUATION = {"ATA": "DPA", "PTA": "PLA"}  # the peroneal ends above the ankle

# GLASS femoropopliteal grade (GVG 2019 figure 5.1, recalled). Centimetres as the guideline gives.
FP_SFA_DISEASE_CM = (10.0, 20.0)  # < 10 FP1 . 10-20 FP2 . > 20 FP3
FP_FOCAL_OCCLUSION_CM = 5.0  # one non-flush occlusion < 5 cm: FP1
FP_OCCLUSION_CM = (10.0, 20.0)  # non-flush < 10 FP2 . 10-20 FP3 . flush <= 20 FP3 . > 20 FP4
FP_POP_STENOSIS_CM = (2.0, 5.0)  # < 2 FP2 . 2-5 FP3 . > 5 FP4; trifurcation or occlusion FP4
# GLASS infrapopliteal grade (GVG 2019 figure 5.2, recalled); fractions of the vessel length.
IP_FOCAL_CM = 3.0  # stenosis < 3 cm IP1; one occlusion < 3 cm (not origin, not TPT) IP2
IP_FRACTIONS = ((1, 3), (2, 3))  # disease <= 1/3 IP2, <= 2/3 IP3, more IP4; occlusion > 1/3 IP4
# GLASS limb stage (GVG 2019 figure 5.3, recalled): rows FP0..FP4, columns IP0..IP4; None = n/a.
STAGE_TABLE: tuple[tuple[str | None, ...], ...] = (
    (None, "I", "I", "II", "III"),
    ("I", "I", "II", "II", "III"),
    ("I", "II", "II", "II", "III"),
    ("II", "II", "II", "III", "III"),
    ("III", "III", "III", "III", "III"),
)
# TASC II femoropopliteal (Norgren 2007, confirmed), cm.
TASC_A_STENOSIS_CM = 10.0  # single stenosis <= 10
TASC_A_OCCLUSION_CM = 5.0  # single occlusion <= 5 (heavily calcified: B)
TASC_B_EACH_CM = 5.0  # multiple lesions each <= 5
TASC_B_SINGLE_CM = 15.0  # single lesion <= 15 not involving the infrageniculate popliteal
TASC_C_TOTAL_CM = 15.0  # multiple lesions totalling > 15
TASC_D_OCCLUSION_CM = 20.0  # occlusion of the SFA > 20 involving the popliteal
# Runoff vessel scale (Rutherford 1997, confirmed): 0 <= 20%, 1 21-49%, 2 50-99%, 2.5 occluded
# <= half its length, 3 more. Our <50% band spans 1-49%, so it scores 1: documented disease is
# not scored as normal (the same rule as the grading's lesion floor).
RUNOFF_SCALE_BY_SEVERITY = {0: 0.0, 1: 1.0, 2: 2.0, 3: 2.0}
RUNOFF_OCCLUDED_HALF, RUNOFF_OCCLUDED_MORE = 2.5, 3.0


def planning_note() -> str:
    """Return the fixed statement printed with every planning summary."""
    return (
        "Grades, stage and runoff are derived from the duplex findings and nominal segment "
        "lengths; confirm them on the imaging used to plan treatment."
    )


def stage_of(fp: int, ip: int) -> str | None:
    """Return the GLASS limb stage for FP and IP grades 0-4 (None for FP0/IP0: not applicable)."""
    return STAGE_TABLE[fp][ip]


@dataclass(frozen=True)
class _Leg:
    """One graded leg with its stretches of disease, as the grading rules below read it."""

    limb: LimbResult
    sets: CriteriaSets
    extents: tuple[_Extent, ...]

    def sev(self, seg: str) -> int:
        return self.sets.severity(self.limb.segments[seg].band)

    def unassessed(self, segs: Iterable[str]) -> tuple[str, ...]:
        return tuple(s for s in segs if self.sev(s) < 0)

    def worst(self, segs: Iterable[str]) -> str:
        return max((self.limb.segments[s].band for s in segs), key=self.sets.severity)

    def touching(self, segs: Sequence[str]) -> list[_Extent]:
        """Return the native stretches of disease in these segments (in-stent ones left out)."""
        return [e for e in self.extents if e.touches(segs) and not e.in_stent]

    def touching_all(self, segs: Sequence[str]) -> list[_Extent]:
        """Return every stretch of disease in these segments, in-stent restenosis included."""
        return [e for e in self.extents if e.touches(segs)]


def _names(extents: Sequence[_Extent], segs: Sequence[str]) -> str:
    return ", ".join(e.label for e in extents if e.touches(segs))


def _step(value: float, first: int, bounds: Sequence[float]) -> int:
    """Return ``first`` below the first bound, then one more per bound passed (later ones <=)."""
    if value < bounds[0]:
        return first
    return first + 1 + sum(value > b for b in bounds[1:])


def _finish(
    found: list[tuple[int, str]], ext: list[_Extent], what: str, none: str, missing: Sequence[str]
) -> tuple[int, tuple[str, ...]]:
    """Return the worst grade found, raised for severe calcification, with what set it."""
    grade = max((g for g, _ in found), default=0)
    drivers = [t for g, t in found if g == grade] or [none]
    calc = [e.label for e in ext if e.calcified]
    if calc and grade > 0:
        raised = min(grade + 1, 4)
        how = f"{what}{grade} -> {raised}" if raised > grade else f"{what}4 already the highest"
        drivers.append(f"{how}, severe calcification: {', '.join(calc)}")
        grade = raised
    if missing:
        drivers.append("not assessed: " + ", ".join(missing))
    return grade, tuple(drivers)


def _fp_grade(leg: _Leg) -> tuple[int | None, tuple[str, ...]]:
    """Return the GLASS femoropopliteal grade and the descriptors that set it."""
    path = SFA + POPLITEAL
    missing = leg.unassessed(path)
    if len(missing) == len(path):
        return None, ("SFA and popliteal artery not assessed",)
    ext = leg.touching(path)
    found: list[tuple[int, str]] = []
    if (sfa_cm := _union_cm(ext, SFA)) > 0:
        g, names = _step(sfa_cm, 1, FP_SFA_DISEASE_CM), _names(ext, SFA)
        found.append((g, f"SFA disease over {_cm(sfa_cm)}: {names}"))
    occl = [e for e in ext if e.occluded and e.touches(SFA)]
    if occl:
        found.append(_sfa_occlusions(occl))
    pop = [e for e in ext if e.touches(POPLITEAL)]
    # The trifurcation is "the termination of the popliteal artery at the confluence of the
    # anterior tibial (AT) artery and tibioperoneal trunk" (GVG 2019, FP grading figure caption):
    # the end of POP-BK, or the TPT.
    for e in pop:
        if e.occluded:
            found.append((4, f"popliteal occlusion: {e.label}"))
        elif e.reaches_end("POP-BK") or e.touches(("TPT",)):
            found.append((4, f"popliteal disease into the trifurcation: {e.label}"))
    stenoses = [e for e in pop if not e.occluded]
    if (pop_cm := _union_cm(stenoses, POPLITEAL)) > 0:
        g, names = _step(pop_cm, 2, FP_POP_STENOSIS_CM), _names(stenoses, POPLITEAL)
        found.append((g, f"popliteal stenosis over {_cm(pop_cm)}: {names}"))
    return _finish(found, ext, "FP", "no disease >= 50% in the SFA or popliteal", missing)


def _sfa_occlusions(occl: Sequence[_Extent]) -> tuple[int, str]:
    """Return the FP grade of the SFA occlusions, their lengths summed (GVG 2019 "totalling")."""
    total = _union_cm(occl, SFA)
    flush = [e for e in occl if e.at_origin("SFA-P")]
    lo, hi = FP_OCCLUSION_CM
    if total > hi:
        g = 4
    elif flush or total >= lo:
        g = 3
    else:  # one focal occlusion is FP1; a second one or one of 5 cm or more, FP2
        g = 2 if total >= FP_FOCAL_OCCLUSION_CM or len(occl) > 1 else 1
    names = ", ".join(e.label for e in occl)
    what = "SFA occlusion of" if len(occl) == 1 else f"{len(occl)} SFA occlusions totalling"
    text = f"{what} {_cm(total)}: {names}"
    if flush:
        assumed = [e for e in flush if not e.start_given]
        text = f"flush {text}"
        if assumed:
            text += " (flush assumed: no from_cm recorded, the start taken as the SFA origin)"
    return g, text


def _tibial_path(vessel: str) -> tuple[str, ...]:
    own = tuple(f"{vessel}-{t}" for t in "PMD")
    return own if vessel == "ATA" else ("TPT", *own)


def _ip_grade(leg: _Leg, vessel: str) -> VesselGrade:
    """Return the GLASS infrapopliteal grade the vessel would have as the target artery."""
    path = _tibial_path(vessel)
    own = path[-3:]
    missing = leg.unassessed(path)
    if set(own) <= set(missing):
        return VesselGrade(vessel, None, 0.0, 0.0, (f"{vessel} not assessed",))
    length = sum(SEGMENTS[s].length_cm for s in own)
    third, two_thirds = (round(length * a / b, 3) for a, b in IP_FRACTIONS)
    ext = leg.touching(path)
    occl = [e for e in ext if e.occluded]
    dis_cm, occl_cm = _union_cm(ext, path), _union_cm(occl, path)
    of = f"of {_cm(length)}"
    found: list[tuple[int, str]] = []
    if dis_cm > 0:
        g = _step(dis_cm, 1, (IP_FOCAL_CM, third, two_thirds))
        found.append((g, f"{vessel} disease over {_cm(dis_cm)} {of}: {_names(ext, path)}"))
    found += [
        (4, f"TPT occlusion, {vessel} the target: {e.label}") for e in occl if e.touches(("TPT",))
    ]
    if occl:
        origin = any(e.at_origin(own[0]) for e in occl)
        if occl_cm > third:
            g = 4
        else:  # one focal occlusion away from the origin is IP2; otherwise up to 1/3 is IP3
            g = 2 if len(occl) == 1 and occl_cm < IP_FOCAL_CM and not origin else 3
        names = ", ".join(e.label for e in occl)
        at = " at its origin" if origin else ""
        found.append((g, f"{vessel} occluded over {_cm(occl_cm)} {of}{at}: {names}"))
    grade, drivers = _finish(found, ext, "IP", f"no disease >= 50% in the {vessel} path", missing)
    return VesselGrade(vessel, grade, dis_cm, occl_cm, drivers)


def _choose_target(leg: _Leg, grades: Sequence[VesselGrade]) -> tuple[str | None, str]:
    """Return the least diseased tibial artery and why it was chosen."""
    graded = [g for g in grades if g.grade is not None]
    if not graded:
        return None, "no tibial artery assessed"

    def key(g: VesselGrade) -> tuple[int, int, float, float, int]:
        pedal = PEDAL_CONTINUATION.get(g.vessel)
        sev = leg.sev(pedal) if pedal else OCCLUDED
        in_line = 0 if 0 <= sev < OCCLUDED else 1 if sev < 0 else 2
        return (g.grade or 0, in_line, g.occluded_cm, g.diseased_cm, TIBIALS.index(g.vessel))

    best = min(graded, key=key)
    tied = [g.vessel for g in graded if g.grade == best.grade and g is not best]
    basis = f"least diseased tibial artery (IP{best.grade})"
    if tied:
        basis += f"; tie with {', '.join(tied)} broken by in-line flow to the foot, then length"
    return best.vessel, basis


def _runoff(leg: _Leg) -> tuple[RunoffVessel, ...]:
    """Return each tibial artery's patency to the ankle and its SVS vessel scale."""
    out = []
    for vessel in TIBIALS:
        path = _tibial_path(vessel)
        sev = [leg.sev(s) for s in path]
        unseen = [s for s, v in zip(path, sev, strict=True) if v < 0]
        length = sum(SEGMENTS[s].length_cm for s in path)
        scale: float | None
        if max(sev) >= OCCLUDED:
            occl_cm = _union_cm([e for e in leg.extents if e.occluded], path)
            half = occl_cm <= length / 2
            state, scale = "occluded", RUNOFF_OCCLUDED_HALF if half else RUNOFF_OCCLUDED_MORE
            basis = f"occluded over {_cm(occl_cm)} of {_cm(length)} ({'<=' if half else '>'} half)"
            if unseen and half:  # the unseen rest could hold more occlusion
                scale, basis = None, f"{basis}; not assessed: {', '.join(unseen)}"
        elif unseen:
            state, scale, basis = "not-assessed", None, "not assessed: " + ", ".join(unseen)
        else:
            state, scale = "patent", RUNOFF_SCALE_BY_SEVERITY[max(sev)]
            basis = f"patent to the ankle; worst band {leg.worst(path)}"
        out.append(RunoffVessel(vessel, state, scale, basis))
    return tuple(out)


TASC_D_READING = (
    "TASC D read strictly: an SFA occlusion > 20 cm is D only when it runs into the popliteal"
)


def _tasc(extents: Sequence[_Extent]) -> tuple[str | None, tuple[str, ...]]:
    """Return the TASC II femoropopliteal class, the rule that set it and the reading used."""
    native = [e for e in extents if not e.in_stent]
    tasc, drivers = _tasc_class(native)
    long_sfa = [
        e for e in native if e.occluded and e.touches(SFA) and e.cm_in(SFA) > TASC_D_OCCLUSION_CM
    ]
    if long_sfa and tasc != "D":
        names = ", ".join(e.label for e in long_sfa)
        drivers = (*drivers, f"{TASC_D_READING}; this one stops above it: {names}")
    elif long_sfa:
        drivers = (*drivers, TASC_D_READING)
    return tasc, drivers


def _tasc_class(extents: Sequence[_Extent]) -> tuple[str | None, tuple[str, ...]]:
    """Return the TASC II femoropopliteal class and the rule that set it."""
    occl = [e for e in extents if e.occluded]
    tri = [e for e in occl if e.touches(("TPT",)) or e.at_origin("ATA-P")]
    for e in occl:
        if e.touches(("CFA",)):
            return "D", (f"CFA occlusion: {e.label}",)
        if e.touches(SFA) and e.touches(POPLITEAL) and e.length_cm > TASC_D_OCCLUSION_CM:
            return "D", (f"SFA occlusion > 20 cm involving the popliteal: {e.label}",)
        if e.touches(POPLITEAL) and tri and (e.reaches_end("POP-BK") or e in tri):
            names = ", ".join(dict.fromkeys(x.label for x in (e, *tri)))
            return "D", (f"occlusion of the popliteal and proximal trifurcation vessels: {names}",)
    ext = [e for e in extents if e.touches(SFA + POPLITEAL)]
    if not ext:
        return None, ("no femoropopliteal lesion >= 50%",)
    names = ", ".join(e.label for e in ext)
    if len(ext) > 1:
        total = round(sum(e.length_cm for e in ext), 3)
        if total > TASC_C_TOTAL_CM:
            return "C", (f"multiple lesions totalling {_cm(total)} > 15 cm: {names}",)
        if all(e.length_cm <= TASC_B_EACH_CM for e in ext):
            return "B", (f"multiple lesions each <= 5 cm: {names}",)
        return "C", (f"multiple lesions outside rules A, B and D, classed C: {names}",)
    e = ext[0]
    in_pop, cm = e.touches(POPLITEAL), e.length_cm
    if not in_pop and not e.occluded and cm <= TASC_A_STENOSIS_CM:
        return "A", (f"single stenosis <= 10 cm: {names}",)
    if not in_pop and e.occluded and cm <= TASC_A_OCCLUSION_CM and not e.calcified:
        return "A", (f"single occlusion <= 5 cm: {names}",)
    if e.occluded and e.calcified and cm <= TASC_A_OCCLUSION_CM:
        return "B", (f"heavily calcified occlusion <= 5 cm: {names}", CALCIFICATION_ASSUMPTION)
    if in_pop and not e.occluded and not e.touches(SFA):
        return "B", (f"single popliteal stenosis: {names}",)
    if cm <= TASC_B_SINGLE_CM and not e.touches(("POP-BK",)):
        return "B", (f"single lesion <= 15 cm, not below the knee: {names}",)
    return "C", (f"single lesion outside rules A, B and D, classed C: {names}",)


def _level(leg: _Leg, level: PlanLevel) -> LevelSummary:
    segs = LEVEL_SEGMENTS[level]
    ext = leg.touching_all(segs)
    occl_cm = _union_cm([e for e in ext if e.occluded], segs)
    cm, missing = _union_cm(ext, segs), leg.unassessed(segs)
    return LevelSummary(level, leg.worst(segs), cm, occl_cm, len(ext), missing, len(segs))


def _occlusion(e: _Extent) -> Occlusion:
    first = e.spans[0]
    return Occlusion(first.segment, float(first.start_cm), e.length_cm, e.reconstitutes, e.label)


def _inflow(leg: _Leg) -> tuple[str, bool | None, tuple[str, ...]]:
    """Return the worst inflow band, whether it is >= 50% (None: not assessed) and its basis."""
    band, missing = leg.worst(INFLOW_PATH), leg.unassessed(INFLOW_PATH)
    drivers = [f"worst inflow band {band}", *(e.label for e in leg.touching(INFLOW_PATH))]
    if missing:
        drivers.append("not assessed: " + ", ".join(missing))
    significant = leg.sets.severity(band) >= SIGNIFICANT_SEVERITY
    return band, significant if len(missing) < len(INFLOW_PATH) else None, tuple(drivers)


def plan_limb(
    study: Study, limb: LimbResult, sets: CriteriaSets, *, target: str | None = None
) -> Planning:
    """Summarise one graded leg for planning; ``target`` forces the tibial target artery."""
    if target is not None and target not in TIBIALS:
        raise ValueError(f"target {target!r} must be one of {', '.join(TIBIALS)} or None")
    extents, notes = _extents(study, limb, sets)
    leg = _Leg(limb, sets, tuple(extents))
    runoff = _runoff(leg)
    unscored = ", ".join(r.vessel for r in runoff if r.scale is None)
    terms = " + ".join(f"{r.vessel} {r.scale:g}" for r in runoff if r.scale is not None)
    inflow_band, inflow_significant, inflow_drivers = _inflow(leg)
    fp, fp_drivers = _fp_grade(leg)
    by_vessel = tuple(_ip_grade(leg, v) for v in TIBIALS)
    chosen, target_basis = _choose_target(leg, by_vessel) if not target else (target, "given")
    ip_row = next(g for g in by_vessel if g.vessel == chosen) if chosen else None
    ip = ip_row.grade if ip_row else None
    if fp is None or ip is None:
        stage, stage_basis = None, f"not staged: {'FP' if fp is None else 'IP'} grade not available"
    else:
        stage = stage_of(fp, ip)
        stage_basis = f"FP{fp} x IP{ip} -> {stage or 'n/a'} (GVG 2019 limb stage table, recalled)"
    tasc, tasc_drivers = _tasc(extents)
    if limb.grafts:
        notes.append("a bypass graft is recorded; the grades describe the native arteries")
    if limb.stents:
        notes.append("a stent is recorded; the grades describe the native arteries")
    fp_path = SFA + POPLITEAL
    fp_provisional = fp is not None and bool(leg.unassessed(fp_path))
    ip_provisional = (
        ip is not None and chosen is not None and bool(leg.unassessed(_tibial_path(chosen)))
    )
    return Planning(
        side=limb.side,
        levels=tuple(_level(leg, lv) for lv in PlanLevel),
        occlusions=tuple(_occlusion(e) for e in extents if e.occluded),
        runoff=runoff,
        runoff_vessels=sum(r.state == "patent" for r in runoff),
        runoff_unassessed=tuple(r.vessel for r in runoff if r.state == "not-assessed"),
        runoff_score=None if unscored else 1.0 + sum(r.scale or 0.0 for r in runoff),
        runoff_basis=f"not scored: {unscored} not fully assessed" if unscored else f"1 + {terms}",
        inflow_band=inflow_band,
        inflow_significant=inflow_significant,
        inflow_drivers=inflow_drivers,
        fp_grade=fp,
        fp_drivers=fp_drivers,
        target=chosen,
        target_basis=target_basis,
        ip_grade=ip,
        ip_drivers=ip_row.drivers if ip_row else ("no tibial artery assessed",),
        ip_by_vessel=by_vessel,
        stage=stage,
        stage_basis=stage_basis,
        tasc_fp=tasc,
        tasc_drivers=tasc_drivers,
        assumptions=tuple(dict.fromkeys(notes)),
        fp_provisional=fp_provisional,
        ip_provisional=ip_provisional,
        stage_provisional=stage is not None and (fp_provisional or ip_provisional),
        tasc_provisional=0 < len(leg.unassessed(fp_path)) < len(fp_path),
    )
