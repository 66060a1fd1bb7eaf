"""Long-wave emissivities of building materials, each with where the value comes from."""

from __future__ import annotations

from dataclasses import dataclass

from envelope.errors import SurveyError

__all__ = ["Material", "MATERIALS", "emissivity_for"]


@dataclass(frozen=True)
class Material:
    """Long-wave emissivity of a building material, with where the value comes from."""

    name: str
    emissivity: float
    source: str
    note: str = ""


_INC = "Incropera et al., Fundamentals of Heat and Mass Transfer, 6th ed., Table A.11 (from memory)"
_ASH = "ASHRAE Handbook Fundamentals 2017, ch. 4, emissivity table (from memory)"
_EN673 = "EN 673:2011 / ISO 10292, uncoated soda-lime glass 0.837 (from memory)"
_PRACT = "common practice in building thermography (from memory)"

MATERIALS: dict[str, Material] = {m.name: m for m in (
    Material("painted-plaster", 0.93, _ASH, "emulsion or oil paint, any colour"),
    Material("brick", 0.93, _INC, "common red brick, rough"),
    Material("concrete", 0.92, _INC, "rough, 0.88-0.93"),
    Material("render", 0.93, _PRACT, "cement or lime render, matt"),
    Material("glass", 0.84, _EN673, "uncoated float glass, near normal view; low-e coatings much lower"),
    Material("timber", 0.90, _INC, "planed or painted wood, 0.82-0.92"),
    Material("pvc-u-frame", 0.90, _PRACT, "white PVC-U window frame"),
    Material("aluminium-bare", 0.09, _INC, "commercial sheet; unreliable for measurement"),
    Material("aluminium-anodised", 0.82, _INC, ""),
    Material("galvanised-steel", 0.28, _ASH, "weathered; new bright sheet about 0.23"),
    Material("roofing-felt", 0.92, _PRACT, "bitumen felt"),
    Material("ceramic-tile", 0.90, _INC, "glazed"),
    Material("plasterboard", 0.90, _ASH, "gypsum board, papered, painted"),
    Material("foil-faced-insulation", 0.05, _ASH, "bright aluminium foil facing; do not measure"),
    Material("water", 0.96, _INC, "liquid film"),
    Material("ice", 0.97, _INC, "smooth ice or frost 0.96-0.98"),
    Material("electrical-tape", 0.95, _PRACT, "black PVC tape, reference patch"),
    Material("matt-black-paint", 0.95, _PRACT, "flat black paint, reference patch"),
)}
"""Long-wave (about 8-14 µm / total hemispherical) emissivities; keys are hyphenated slugs."""


def emissivity_for(name):
    """Emissivity of a material of `MATERIALS` [-], by its slug (case-insensitive)."""
    key = str(name).strip().lower().replace(" ", "-").replace("_", "-")
    if key not in MATERIALS:
        raise SurveyError(f"unknown material {name!r}; valid: {', '.join(sorted(MATERIALS))}",
                          field="material")
    return MATERIALS[key].emissivity
