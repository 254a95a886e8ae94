"""Class codes of geomelt's categorical outputs, with labels and colours.

Each categorical quantity (tectonic-magmatic setting, melting mechanism,
magma type) has one :class:`ClassScheme`: the single source of the raster
codes, GeoPackage values, legend labels and colours. The names of the classes
are the trade's own terms; codes and colours are geomelt's.

Colours were chosen for geomelt: hues spread around the wheel with
alternating lightness so neighbouring classes stay apart for the common forms
of colour-vision deficiency; related classes share a hue family (the three
subduction-related settings are warm, spreading settings cool).
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import IntEnum

__all__ = [
    "CLASS_NODATA",
    "MAGMA_TYPE",
    "MELTING_MECHANISM",
    "MOHO_TEMPERATURE_FLAG",
    "SCHEMES",
    "SECONDARY_SETTING",
    "SETTING",
    "ClassScheme",
    "MagmaType",
    "Mechanism",
    "Setting",
    "mechanism_label",
]

CLASS_NODATA = 255
"""Nodata value of every uint8 class raster."""


class Setting(IntEnum):
    """Tectonic-magmatic setting of a cell."""

    STABLE_INTERIOR = 1
    MID_OCEAN_RIDGE = 2
    TRANSFORM = 3
    CONTINENTAL_RIFT = 4
    OCEANIC_ARC = 5
    CONTINENTAL_ARC = 6
    FOREARC = 7
    BACK_ARC = 8
    CONTINENTAL_COLLISION = 9
    OCEANIC_HOTSPOT = 10
    CONTINENTAL_HOTSPOT = 11


class Mechanism(IntEnum):
    """Melting mechanism as bit flags; combinations are bitwise ORs (0 = none)."""

    NONE = 0
    DECOMPRESSION = 1
    FLUX = 2
    CRUSTAL_HEATING = 4


class MagmaType(IntEnum):
    """Dominant magma composition expected from the melting in a cell."""

    NONE = 0
    MAFIC = 1
    INTERMEDIATE = 2
    FELSIC = 3
    BIMODAL = 4


@dataclass(frozen=True)
class ClassEntry:
    """One class: code, machine key, legend label, RGBA colour, description."""

    code: int
    key: str
    label: str
    rgba: tuple[int, int, int, int]
    description: str


@dataclass(frozen=True)
class ClassScheme:
    """All classes of one categorical output."""

    name: str
    title: str
    entries: tuple[ClassEntry, ...]
    nodata: int = CLASS_NODATA

    def by_code(self) -> dict[int, ClassEntry]:
        """Entries keyed by code."""
        return {e.code: e for e in self.entries}

    def labels(self) -> dict[int, str]:
        """Legend label per code."""
        return {e.code: e.label for e in self.entries}

    def colormap(self) -> dict[int, tuple[int, int, int, int]]:
        """GDAL colour table: every class colour, nodata transparent."""
        cmap = {e.code: e.rgba for e in self.entries}
        cmap[self.nodata] = (0, 0, 0, 0)
        return cmap

    def category_names(self) -> list[str]:
        """GDAL category names indexed by pixel value (empty for unused codes)."""
        names = [""] * (max(e.code for e in self.entries) + 1)
        for e in self.entries:
            names[e.code] = e.label
        return names


def _hex(h: str) -> tuple[int, int, int, int]:
    h = h.lstrip("#")
    return (int(h[0:2], 16), int(h[2:4], 16), int(h[4:6], 16), 255)


SETTING = ClassScheme(
    "setting",
    "Tectonic-magmatic setting",
    (
        ClassEntry(
            1,
            "stable_interior",
            "stable interior",
            _hex("#d9d4c7"),
            "Plate interior away from active boundaries and plumes",
        ),
        ClassEntry(
            2,
            "mid_ocean_ridge",
            "mid-ocean ridge",
            _hex("#1f5fa8"),
            "Oceanic spreading axis and its young flanks",
        ),
        ClassEntry(
            3,
            "transform",
            "transform",
            _hex("#8fb3d9"),
            "Strike-slip plate boundary offsetting ridge segments",
        ),
        ClassEntry(
            4,
            "continental_rift",
            "continental rift",
            _hex("#2e9e8f"),
            "Extending continental lithosphere",
        ),
        ClassEntry(
            5,
            "oceanic_arc",
            "oceanic arc",
            _hex("#e07b22"),
            "Volcanic arc on an oceanic overriding plate (intra-oceanic arc)",
        ),
        ClassEntry(
            6,
            "continental_arc",
            "continental arc",
            _hex("#a3361f"),
            "Volcanic arc on a continental overriding plate",
        ),
        ClassEntry(
            7,
            "forearc",
            "forearc",
            _hex("#f2d06b"),
            "Cold overriding plate between trench and volcanic front",
        ),
        ClassEntry(
            8,
            "back_arc",
            "back-arc",
            _hex("#7d4fa8"),
            "Overriding plate behind the arc, extending or hot",
        ),
        ClassEntry(
            9,
            "continental_collision",
            "continental collision",
            _hex("#5c3d2e"),
            "Thickened crust of a continent-continent collision",
        ),
        ClassEntry(
            10,
            "oceanic_hotspot",
            "oceanic hotspot",
            _hex("#d6457f"),
            "Mantle plume beneath oceanic lithosphere",
        ),
        ClassEntry(
            11,
            "continental_hotspot",
            "continental hotspot",
            _hex("#8c1c4f"),
            "Mantle plume beneath continental lithosphere",
        ),
    ),
)

_MECH_COLOURS = {
    0: ("#e6e6e6", "no melting"),
    1: ("#3b7dd8", "decompression"),
    2: ("#e8892b", "flux (water addition)"),
    3: ("#8a5fc7", "decompression + flux"),
    4: ("#c2304a", "crustal heating"),
    5: ("#2aa198", "decompression + crustal heating"),
    6: ("#f0c419", "flux + crustal heating"),
    7: ("#4d3319", "decompression + flux + crustal heating"),
}


def mechanism_label(code: int) -> str:
    """Legend label of a mechanism code (bit flags)."""
    return _MECH_COLOURS[int(code)][1]


MELTING_MECHANISM = ClassScheme(
    "melting_mechanism",
    "Melting mechanism",
    tuple(
        ClassEntry(
            code,
            label.replace(" (water addition)", "").replace(" + ", "_and_").replace(" ", "_"),
            label,
            _hex(colour),
            f"Melting by {label}" if code else "No melting predicted",
        )
        for code, (colour, label) in _MECH_COLOURS.items()
    ),
)

MAGMA_TYPE = ClassScheme(
    "magma_type",
    "Magma type",
    (
        ClassEntry(0, "none", "none", _hex("#e6e6e6"), "No melt predicted"),
        ClassEntry(1, "mafic", "mafic", _hex("#2b4f8c"), "Basaltic melt (SiO2 45-52 wt%)"),
        ClassEntry(
            2, "intermediate", "intermediate", _hex("#4fa36b"), "Andesitic melt (SiO2 52-63 wt%)"
        ),
        ClassEntry(
            3, "felsic", "felsic", _hex("#e0a526"), "Dacitic to rhyolitic melt (SiO2 > 63 wt%)"
        ),
        ClassEntry(
            4,
            "bimodal",
            "bimodal",
            _hex("#b5477d"),
            "Mafic and felsic melts together, few intermediate",
        ),
    ),
)

MOHO_TEMPERATURE_FLAG = ClassScheme(
    "moho_temperature_flag",
    "Steady-state Moho temperature flag",
    (
        ClassEntry(
            0,
            "plausible",
            "steady state plausible",
            _hex("#d9d9d9"),
            "Steady-state Moho temperature within the range crust of this thickness shows",
        ),
        ClassEntry(
            1,
            "too_hot",
            "hotter than orogenic crust shows",
            _hex("#b2182b"),
            "Steady-state Moho temperature above the range of thickened orogenic crust",
        ),
    ),
)

SECONDARY_SETTING = ClassScheme(
    "secondary_setting",
    "Secondary tectonic-magmatic influence",
    (ClassEntry(0, "none", "none", _hex("#f7f7f7"), "No second setting applies"),)
    + SETTING.entries[1:],
)
"""Second-ranked setting where several apply (e.g. a ridge beneath a hotspot)."""

SCHEMES: dict[str, ClassScheme] = {
    s.name: s
    for s in (SETTING, SECONDARY_SETTING, MELTING_MECHANISM, MAGMA_TYPE, MOHO_TEMPERATURE_FLAG)
}
"""Every class scheme by name (the ``scheme`` of categorical output layers)."""
