"""Pressure indices per leg: ABI and its category, TBI, the WIfI ischaemia grade, arm difference.

Every threshold below is a table row with its published source (clinical-values.md).
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Context, Decimal, localcontext

from diagram.anatomy import Side
from diagram.assess.results import Finding, LimbIndices
from diagram.reading.study import LimbPressures, Presentation, Pressures

# ABI categories, 2016 AHA/ACC PAD guideline (Gerhard-Herman MD et al., Circulation
# 2017;135:e726): <= 0.90 abnormal, 0.91-0.99 borderline, 1.00-1.40 normal, > 1.40
# noncompressible. (upper bound inclusive, category) on the ABI rounded to two decimals.
ABI_CATEGORIES: tuple[tuple[float, str], ...] = (
    (0.90, "abnormal"),
    (0.99, "borderline"),
    (1.40, "normal"),
    (float("inf"), "noncompressible"),
)
# Severity within abnormal: <= 0.40 severe, 0.41-0.90 mild-moderate (Sukul D et al., JACC
# Cardiovasc Interv 2017).
ABI_SEVERE_MAX = 0.40
# TBI <= 0.70 abnormal, > 0.70 normal: 2016 AHA/ACC PAD guideline, figure 2 (diagnostic testing
# for suspected CLI: "Normal (>0.70)", "Abnormal (≤0.70)") and table 6 ("ABI >1.40 and TBI
# ≤0.70"), read in the guideline's pocket edition (Guideline Central): confirmed.
TBI_ABNORMAL_MAX = 0.70
# WIfI ischaemia grade (Mills JL et al., J Vasc Surg 2014;59:220; grades 1-3 confirmed in a review
# table of the classification, Medicina 2024;60:1179 table 2; grade 0 from memory): lower bounds
# for grades 0, 1, 2; below the last bound is grade 3. The table writes ankle "70-100" for grade 1
# and "50-70" for grade 2: 70 itself is given grade 1 here (the milder row), our own reading.
WIFI_ABI = ((0.80, 0), (0.60, 1), (0.40, 2))  # ABI >= bound
WIFI_ANKLE = ((100.0, 0), (70.0, 1), (50.0, 2))  # ankle > 100 grade 0; 70-100 grade 1; 50-<70 2
WIFI_TOE = ((60.0, 0), (40.0, 1), (30.0, 2))  # toe pressure >= bound, mmHg
# TcPO2 shares the toe pressure's column in WIfI (grades 1-3 confirmed in a review table of the
# classification; grade 0 from memory).
WIFI_TCPO2 = WIFI_TOE
# CLTI haemodynamic thresholds (ESC/ESVS 2017; Global Vascular Guidelines 2019), all written
# "<": an ABI of 0.40 exactly is outside the range.
CLTI_ANKLE_BELOW = 50.0
CLTI_ABI_BELOW = 0.40
CLTI_TOE_BELOW = 30.0
CLTI_TCPO2_BELOW = 30.0
# Inter-arm systolic difference (Clark CE et al., Lancet 2012;379:905).
ARM_DIFF_NOTE = 10.0
ARM_DIFF_FLAG = 15.0


def round_half_up(value: float) -> float:
    """Round to two decimals, halves up, exactly on the decimal value written (any finite float).

    ``repr`` gives the shortest decimal that reads back as the float, so 0.855 rounds to 0.86
    (binary 0.855 is a hair below it); the context is wide enough for the largest float.
    """
    with localcontext(Context(prec=400)):
        return float(Decimal(repr(value)).quantize(Decimal("0.01"), rounding=ROUND_HALF_UP))


def round2(value: float) -> float:
    """Round an index to two decimals, halves up (an index is reported to two decimals)."""
    return round_half_up(value)


def abi_category(abi: float) -> str:
    """Return the 2016 AHA/ACC category of an ABI already rounded to two decimals."""
    return next(cat for upper, cat in ABI_CATEGORIES if abi <= upper)


def _grade(value: float, table: tuple[tuple[float, int], ...], *, strict_first: bool) -> int:
    for i, (bound, grade) in enumerate(table):
        if value > bound if (strict_first and i == 0) else value >= bound:
            return grade
    return 3


def _index(pressure: float | None, brachial: float | None) -> float | None:
    """Return pressure / brachial to two decimals, or None when it cannot be computed."""
    if pressure is None or brachial is None or brachial <= 0:
        return None
    ratio = pressure / brachial
    return round2(ratio) if math.isfinite(ratio) else None  # a brachial of 5e-324 overflows


def clti_range(
    abi: float | None, category: str | None, ankle: float | None, limb: LimbPressures
) -> list[str]:
    """Return the pressures of one leg in the CLTI range, in words (empty: none)."""
    low = []
    reliable = category != "noncompressible"
    if abi is not None and reliable and abi < CLTI_ABI_BELOW:
        low.append(f"ABI {abi:.2f} < 0.40")
    if ankle is not None and reliable and ankle < CLTI_ANKLE_BELOW:
        low.append(f"ankle {ankle:g} < 50 mmHg")
    if limb.toe is not None and limb.toe < CLTI_TOE_BELOW:
        low.append(f"toe {limb.toe:g} < 30 mmHg")
    if limb.tcpo2 is not None and limb.tcpo2 < CLTI_TCPO2_BELOW:
        low.append(f"TcPO2 {limb.tcpo2:g} < 30 mmHg")
    return low


def _applies(presentation: Presentation | None, low: list[str]) -> tuple[bool, str]:
    """Return whether the WIfI ischaemia grade applies to the leg, and why."""
    if presentation is not None and presentation.clti:
        return True, f"limb marked {presentation.value.replace('-', ' ')} (CLTI)"
    if low:
        return True, "pressures in the CLTI range: " + ", ".join(low)
    if presentation is not None:
        return False, f"limb marked {presentation.value}: WIfI grades CLTI limbs"
    return False, "not marked CLTI and no pressure in the CLTI range: WIfI grades CLTI limbs"


def _abi(
    limb: LimbPressures, ankle: float | None, brachial: float | None, arm_note: str
) -> tuple[float | None, str | None, str | None, str]:
    """Return the leg's ABI, its 2016 AHA/ACC category, its severity and its basis."""
    abi = _index(ankle, brachial)
    if limb.noncompressible:  # 2016 AHA/ACC: a noncompressible ankle artery gives no ABI; use TBI
        named = " and ".join(v.upper() for v in limb.noncompressible)
        return None, "noncompressible", None, f"{named} noncompressible (recorded): no ABI"
    if abi is not None and ankle is not None and brachial is not None:
        category = abi_category(abi)
        severity = None
        if category == "abnormal":
            severity = "severe" if abi <= ABI_SEVERE_MAX else "mild-moderate"
        which = "PT" if limb.pt == ankle else "DP"
        return abi, category, severity, f"{which} {ankle:g} / brachial {brachial:g} mmHg{arm_note}"
    return abi, None, None, "no ankle pressure" if ankle is None else "no usable brachial pressure"


def _tbi(
    limb: LimbPressures, brachial: float | None, arm_note: str
) -> tuple[float | None, str | None, str]:
    """Return the leg's TBI, its category and its basis."""
    tbi = _index(limb.toe, brachial)
    if tbi is not None and limb.toe is not None and brachial is not None:
        category = "abnormal" if tbi <= TBI_ABNORMAL_MAX else "normal"
        return tbi, category, f"toe {limb.toe:g} / brachial {brachial:g} mmHg{arm_note}"
    return tbi, None, "no toe pressure" if limb.toe is None else "no usable brachial pressure"


def _ischaemia(
    limb: LimbPressures, abi: float | None, ankle: float | None, reliable_ankle: bool
) -> tuple[int | None, str]:
    """Return the WIfI ischaemia grade (the worst of the measures given) and its basis."""
    grades: list[tuple[int, str]] = []
    if abi is not None and reliable_ankle:
        grades.append((_grade(abi, WIFI_ABI, strict_first=False), f"ABI {abi:.2f}"))
    if ankle is not None and reliable_ankle:
        grades.append((_grade(ankle, WIFI_ANKLE, strict_first=True), f"ankle {ankle:g} mmHg"))
    if limb.toe is not None:
        grades.append((_grade(limb.toe, WIFI_TOE, strict_first=False), f"toe {limb.toe:g} mmHg"))
    if limb.tcpo2 is not None:
        grade_t = _grade(limb.tcpo2, WIFI_TCPO2, strict_first=False)
        grades.append((grade_t, f"TcPO2 {limb.tcpo2:g} mmHg"))
    if not grades:
        return None, "no ankle or toe pressure"
    basis = "worst of " + ", ".join(f"{b} (grade {g})" for g, b in grades)
    if not reliable_ankle:
        basis += "; ankle pressure not used (noncompressible)"
    return max(g for g, _ in grades), basis


def limb_indices(
    pressures: Pressures, side: Side, presentation: Presentation | None = None
) -> LimbIndices:
    """Compute ABI, TBI and the ischaemia grade of one leg from what was measured.

    The WIfI ischaemia grade is computed for every leg with a pressure; it *applies* (and the
    sheet prints it) where the leg is marked CLTI or its pressures are in the CLTI range.
    """
    limb = pressures.limb(side)
    arms = [p for p in (pressures.brachial_right, pressures.brachial_left) if p is not None]
    brachial = max(arms) if arms else None
    ankles = [p for p in (limb.pt, limb.dp) if p is not None]
    ankle = max(ankles) if ankles else None
    arm_note = "" if len(arms) == 2 else " (one arm measured)"
    abi, category, severity, abi_basis = _abi(limb, ankle, brachial, arm_note)
    tbi, tbi_category, tbi_basis = _tbi(limb, brachial, arm_note)
    grade, ischaemia_basis = _ischaemia(limb, abi, ankle, category != "noncompressible")
    applies, context = _applies(presentation, clti_range(abi, category, ankle, limb))
    return LimbIndices(
        side,
        ankle,
        brachial,
        abi,
        category,
        severity,
        abi_basis,
        tbi,
        tbi_category,
        tbi_basis,
        grade,
        ischaemia_basis,
        applies,
        context,
        limb.tcpo2,
    )


def _arm_difference(pressures: Pressures) -> list[Finding]:
    """Return the warning on the two arms' systolic pressures differing, if they do."""
    r, left = pressures.brachial_right, pressures.brachial_left
    if r is None or left is None:
        return []
    diff = abs(r - left)
    if diff >= ARM_DIFF_FLAG:
        return [
            Finding(
                "arm-difference",
                None,
                None,
                f"brachial pressures differ by {diff:g} mmHg (>= 15): possible "
                "subclavian stenosis; the ABI uses the higher arm.",
            )
        ]
    if diff >= ARM_DIFF_NOTE:
        return [
            Finding(
                "arm-difference-minor",
                None,
                None,
                f"brachial pressures differ by {diff:g} mmHg (>= 10); the ABI uses the higher arm.",
            )
        ]
    return []


def pressure_findings(pressures: Pressures, indices: dict[Side, LimbIndices]) -> list[Finding]:
    """Return warnings: arm difference, noncompressible vessels, CLTI-range pressures."""
    out = _arm_difference(pressures)
    for side, ix in indices.items():
        if ix.abi_category == "noncompressible":
            found = (
                f"ABI {ix.abi:.2f} > 1.40: vessels noncompressible"
                if ix.abi is not None
                else ix.abi_basis  # recorded noncompressible: no ABI figure
            )
            out.append(
                Finding(
                    "noncompressible",
                    side,
                    None,
                    f"{found}; rely on the "
                    "TBI" + ("." if ix.tbi is not None else " (no toe pressure)."),
                )
            )
        low = clti_range(ix.abi, ix.abi_category, ix.ankle_mmhg, pressures.limb(side))
        if low:
            out.append(
                Finding(
                    "clti-pressure",
                    side,
                    None,
                    "pressures in the range of chronic limb-threatening ischaemia: "
                    + ", ".join(low)
                    + ".",
                )
            )
    return out
