"""Nominal vessel diameters of the map: the one table the template reader and generators use."""

from __future__ import annotations

from collections.abc import Mapping
from types import MappingProxyType

# Nominal reference diameters, mm. Lorbeer R et al., PLoS One 2018 (clinical-values.md): CIA 11.8,
# EIA 10.3, proximal femoral 10.2, distal femoral 7.7, popliteal 6.9, AT 4.2, PT 3.8, peroneal 4.0.
# From memory: distal aorta 16, internal iliac 6, profunda 6, TPT 5, pedal arteries 2.5.
NOMINAL_DIAMETER_MM: Mapping[str, float] = MappingProxyType(
    {
        "AO": 16.0,
        "CIA": 11.8,
        "IIA": 6.0,
        "EIA": 10.3,
        "CFA": 10.2,
        "PFA": 6.0,
        **dict.fromkeys(("SFA-P", "SFA-M", "SFA-D"), 7.7),
        **dict.fromkeys(("POP-AK", "POP-BK"), 6.9),
        "TPT": 5.0,
        **dict.fromkeys(("ATA-P", "ATA-M", "ATA-D"), 4.2),
        **dict.fromkeys(("PTA-P", "PTA-M", "PTA-D"), 3.8),
        **dict.fromkeys(("PER-P", "PER-M", "PER-D"), 4.0),
        "DPA": 2.5,
        "PLA": 2.5,
    }
)
