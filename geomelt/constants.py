"""Physical constants and parameter defaults, each with its unit and source.

This module is the single place where geomelt's numbers live. Physics
functions take their defaults from here, the algorithm registry exposes them
as user parameters (name, unit, default, valid range, reference), and the
outputs record them as provenance.

Status words in ``source`` follow the project's reference sheet: a value that
was recalled rather than checked against the publication says "from memory";
a convention of the trade says "common practice".
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Constant", "CONSTANTS"]


@dataclass(frozen=True)
class Constant:
    """A named default with its unit, source and valid range.

    Parameters
    ----------
    name : str
        Parameter name, with its unit as suffix (``crust_conductivity_w_m_k``).
    value : float, str or tuple of float
        Default value.
    unit : str
        Unit (UDUNITS-style text; ``"1"`` for dimensionless, ``""`` for text).
    description : str
        One line saying what the value is.
    source : str
        Published source, or "common practice" / "from memory".
    minimum, maximum : float, optional
        Valid range for user overrides (inclusive). For tuples, per element.
    choices : tuple of str, optional
        Allowed values of a text parameter.
    """

    name: str
    value: float | str | tuple[float, ...]
    unit: str
    description: str
    source: str
    minimum: float | None = None
    maximum: float | None = None
    choices: tuple[str, ...] | None = None


CONSTANTS: dict[str, Constant] = {}


def _c(*args, **kwargs) -> Constant:
    const = Constant(*args, **kwargs)
    if const.name in CONSTANTS:  # pragma: no cover - programming error
        msg = f"constant {const.name!r} defined twice"
        raise RuntimeError(msg)
    CONSTANTS[const.name] = const
    return const


# --------------------------------------------------------------------------------------
# Conductive continental geotherm (Turcotte & Schubert 2002, section 4-8;
# Hasterok & Chapman 2011; Pollack & Chapman 1977)
# --------------------------------------------------------------------------------------
SURFACE_TEMPERATURE_C = _c(
    "surface_temperature_c", 10.0, "degC",
    "Mean annual ground-surface temperature (top boundary of the geotherm)",
    "common practice (mid-latitude mean annual ground temperature)", -40.0, 40.0,
)
HEAT_FLOW_PARTITION = _c(
    "heat_flow_partition", "hasterok_chapman", "",
    "How surface heat flow is split into crustal heat production and mantle heat flow",
    "Hasterok & Chapman 2011, EPSL 307:59 (default); Pollack & Chapman 1977, "
    "Tectonophysics 38:279 with Turcotte & Schubert 2002 eq. 4-31 (option)",
    choices=("hasterok_chapman", "pollack_chapman"),
)
UPPER_CRUST_THICKNESS_KM = _c(
    "upper_crust_thickness_km", 16.0, "km",
    "Thickness of the heat-producing upper crust in the Hasterok & Chapman partition",
    "Hasterok & Chapman 2011 as set in an open implementation (secondary source)", 1.0, 40.0,
)
UPPER_CRUST_HEAT_FRACTION = _c(
    "upper_crust_heat_fraction", 0.26, "1",
    "Fraction of surface heat flow produced in the upper crust (Hasterok & Chapman partition)",
    "Hasterok & Chapman 2011, EPSL 307:59 (abstract)", 0.0, 0.9,
)
LOWER_CRUST_HEAT_PRODUCTION_UW_M3 = _c(
    "lower_crust_heat_production_uw_m3", 0.4, "uW m-3",
    "Volumetric heat production of the lower crust",
    "Hasterok & Chapman 2011, EPSL 307:59", 0.0, 3.0,
)
MANTLE_HEAT_PRODUCTION_UW_M3 = _c(
    "mantle_heat_production_uw_m3", 0.02, "uW m-3",
    "Volumetric heat production of the lithospheric mantle",
    "Hasterok & Chapman 2011, EPSL 307:59", 0.0, 0.2,
)
REDUCED_HEAT_FLOW_FRACTION = _c(
    "reduced_heat_flow_fraction", 0.6, "1",
    "Mantle (reduced) heat flow as a fraction of surface heat flow (Pollack & Chapman partition)",
    "Pollack & Chapman 1977, Tectonophysics 38:279 (from memory; linear relation checked)",
    0.1, 1.0,
)
HEAT_PRODUCTION_DEPTH_SCALE_KM = _c(
    "heat_production_depth_scale_km", 10.0, "km",
    "e-folding depth h_r of exponentially decreasing crustal heat production",
    "Lachenbruch 1970, JGR 75:3291 (from memory)", 1.0, 30.0,
)
CRUST_CONDUCTIVITY_W_M_K = _c(
    "crust_conductivity_w_m_k", 2.5, "W m-1 K-1",
    "Thermal conductivity of the crust (constant)",
    "Turcotte & Schubert 2002, ch. 4 (from memory)", 1.0, 5.0,
)
MANTLE_CONDUCTIVITY_W_M_K = _c(
    "mantle_conductivity_w_m_k", 3.0, "W m-1 K-1",
    "Thermal conductivity of the lithospheric mantle (constant)",
    "Turcotte & Schubert 2002, ch. 4 (from memory)", 1.0, 6.0,
)
MANTLE_POTENTIAL_TEMPERATURE_C = _c(
    "mantle_potential_temperature_c", 1350.0, "degC",
    "Potential temperature of the convecting upper mantle (ambient, MORB source)",
    "Herzberg, Condie & Korenaga 2010, EPSL 292:79", 1200.0, 1700.0,
)
ADIABAT_GRADIENT_K_KM = _c(
    "adiabat_gradient_k_km", 0.45, "K km-1",
    "Temperature gradient of the sub-lithospheric mantle adiabat (linear approximation)",
    "approximates the upper-mantle adiabat of Katsura 2022, JGR (secondary source)", 0.2, 0.8,
)
LAB_MAX_DEPTH_KM = _c(
    "lab_max_depth_km", 350.0, "km",
    "Deepest thermal lithosphere base searched; deeper crossings are reported as nodata",
    "common practice (thickest cratonic roots ~250-300 km)", 100.0, 660.0,
)

# --------------------------------------------------------------------------------------
# Oceanic lithosphere (Turcotte & Schubert 2002 section 4-16; Stein & Stein 1992)
# --------------------------------------------------------------------------------------
GDH1_PLATE_THICKNESS_KM = _c(
    "gdh1_plate_thickness_km", 95.0, "km",
    "Plate thickness of the GDH1 cooling model (bounds the oceanic thermal lithosphere)",
    "Stein & Stein 1992, Nature 359:123", 50.0, 150.0,
)
GDH1_BASAL_TEMPERATURE_C = _c(
    "gdh1_basal_temperature_c", 1450.0, "degC",
    "Basal temperature of the GDH1 plate model",
    "Stein & Stein 1992, Nature 359:123", 1200.0, 1600.0,
)
GDH1_CONDUCTIVITY_W_M_K = _c(
    "gdh1_conductivity_w_m_k", 3.138, "W m-1 K-1",
    "Thermal conductivity of the GDH1 plate model",
    "Stein & Stein 1992 (from memory; reproduces the 510 mW m-2 Ma^1/2 coefficient)", 1.0, 6.0,
)
GDH1_HEAT_CAPACITY_J_KG_K = _c(
    "gdh1_heat_capacity_j_kg_k", 1171.0, "J kg-1 K-1",
    "Specific heat of the GDH1 plate model", "Stein & Stein 1992, Nature 359:123",
    500.0, 2000.0,
)
GDH1_DENSITY_KG_M3 = _c(
    "gdh1_density_kg_m3", 3330.0, "kg m-3", "Mantle density of the GDH1 plate model",
    "Stein & Stein 1992, Nature 359:123", 3000.0, 3600.0,
)
MANTLE_THERMAL_DIFFUSIVITY_M2_S = _c(
    "mantle_thermal_diffusivity_m2_s", 0.805e-6, "m2 s-1",
    "Thermal diffusivity of oceanic mantle lithosphere (k / (rho c_p) of GDH1)",
    "Stein & Stein 1992 constants: 3.138 / (3330 x 1171)", 1.0e-7, 3.0e-6,
)
BOUNDARY_LAYER_ERF_ARGUMENT = _c(
    "boundary_layer_erf_argument", 1.16, "1",
    "erf argument defining the half-space thermal boundary layer (T reaches 90 % of the "
    "interior temperature; thickness 2 x 1.16 sqrt(kappa t) = 2.32 sqrt(kappa t))",
    "Turcotte & Schubert 2002, section 4-16 (from memory)", 0.5, 2.0,
)
OCEANIC_GEOTHERM = _c(
    "oceanic_geotherm", "half_space", "",
    "Geotherm used for oceanic cells: half-space cooling with the age implied by heat flow, "
    "or the same conductive model as continents",
    "Turcotte & Schubert 2002 section 4-16; Stein & Stein 1992",
    choices=("half_space", "conductive"),
)
OCEANIC_CRUST_MAX_THICKNESS_KM = _c(
    "oceanic_crust_max_thickness_km", 12.0, "km",
    "Cells with thinner crust are treated as oceanic lithosphere",
    "common practice (normal oceanic crust 7.1 +/- 0.8 km, White, McKenzie & O'Nions 1992, "
    "from memory)", 5.0, 25.0,
)
OCEANIC_MAX_AGE_MA = _c(
    "oceanic_max_age_ma", 200.0, "Ma",
    "Oldest plate age inferred from heat flow (older seafloor is not preserved)",
    "common practice (oldest in-situ oceanic crust ~180-200 Ma)", 50.0, 300.0,
)

# --------------------------------------------------------------------------------------
# Outputs of the thermal-state algorithm
# --------------------------------------------------------------------------------------
TEMPERATURE_DEPTHS_KM = _c(
    "temperature_depths_km", (5.0, 10.0, 20.0), "km",
    "Depths at which a temperature map is written",
    "common practice (drilling reach, mid and lower crust)", 0.0, 300.0,
)
ISOTHERMS_C = _c(
    "isotherms_c", (150.0, 350.0, 600.0), "degC",
    "Isotherms whose depth is mapped: 150 degC (power-grade geothermal), 350 degC "
    "(brittle-ductile transition of quartz-rich crust), 600 degC (near the wet granite solidus)",
    "common practice", 20.0, 1600.0,
)

# --------------------------------------------------------------------------------------
# Global reference values (used in checks and documentation, not as parameters)
# --------------------------------------------------------------------------------------
GLOBAL_MEAN_HEAT_FLOW_MW_M2 = {"continents": 65.0, "oceans": 101.0, "global": 87.0}
"""Global mean surface heat flow, mW m-2 (Pollack, Hurter & Johnson 1993, Rev. Geophys. 31:267)."""
