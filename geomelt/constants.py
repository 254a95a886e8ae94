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
# Geodesy
# --------------------------------------------------------------------------------------
EARTH_MEAN_RADIUS_KM = _c(
    "earth_mean_radius_km",
    6371.0088,
    "km",
    "Mean radius R1 = (2a + b)/3 of the GRS80/WGS84 ellipsoid, for distances on a sphere",
    "Moritz, H. (2000) Geodetic Reference System 1980. J. Geodesy 74, 128-133",
)


# --------------------------------------------------------------------------------------
# Conductive continental geotherm (Turcotte & Schubert 2002, section 4-8;
# Hasterok & Chapman 2011; Pollack & Chapman 1977)
# --------------------------------------------------------------------------------------
SURFACE_TEMPERATURE_C = _c(
    "surface_temperature_c",
    10.0,
    "degC",
    "Mean annual ground-surface temperature (top boundary of the geotherm)",
    "common practice (mid-latitude mean annual ground temperature)",
    -40.0,
    40.0,
)
HEAT_FLOW_PARTITION = _c(
    "heat_flow_partition",
    "hasterok_chapman",
    "",
    "How surface heat flow is split into crustal heat production and mantle heat flow",
    "Hasterok & Chapman 2011, EPSL 307:59 (default); Pollack & Chapman 1977, "
    "Tectonophysics 38:279 with Turcotte & Schubert 2002 eq. 4-31 (option)",
    choices=("hasterok_chapman", "pollack_chapman"),
)
UPPER_CRUST_THICKNESS_KM = _c(
    "upper_crust_thickness_km",
    16.0,
    "km",
    "Thickness of the heat-producing upper crust in the Hasterok & Chapman partition",
    "Hasterok & Chapman 2011 as set in an open implementation (secondary source)",
    1.0,
    40.0,
)
UPPER_CRUST_HEAT_FRACTION = _c(
    "upper_crust_heat_fraction",
    0.26,
    "1",
    "Fraction of surface heat flow produced in the upper crust (Hasterok & Chapman partition)",
    "Hasterok & Chapman 2011, EPSL 307:59 (abstract)",
    0.0,
    0.9,
)
LOWER_CRUST_HEAT_PRODUCTION_UW_M3 = _c(
    "lower_crust_heat_production_uw_m3",
    0.4,
    "uW m-3",
    "Volumetric heat production of the lower crust",
    "Hasterok & Chapman 2011, EPSL 307:59",
    0.0,
    3.0,
)
MANTLE_HEAT_PRODUCTION_UW_M3 = _c(
    "mantle_heat_production_uw_m3",
    0.02,
    "uW m-3",
    "Volumetric heat production of the lithospheric mantle",
    "Hasterok & Chapman 2011, EPSL 307:59",
    0.0,
    0.2,
)
REDUCED_HEAT_FLOW_FRACTION = _c(
    "reduced_heat_flow_fraction",
    0.6,
    "1",
    "Mantle (reduced) heat flow as a fraction of surface heat flow (Pollack & Chapman partition)",
    "Pollack & Chapman 1977, Tectonophysics 38:279 (from memory; linear relation checked)",
    0.1,
    1.0,
)
HEAT_PRODUCTION_DEPTH_SCALE_KM = _c(
    "heat_production_depth_scale_km",
    10.0,
    "km",
    "e-folding depth h_r of exponentially decreasing crustal heat production",
    "Lachenbruch 1970, JGR 75:3291 (from memory)",
    1.0,
    30.0,
)
CRUST_CONDUCTIVITY_W_M_K = _c(
    "crust_conductivity_w_m_k",
    2.5,
    "W m-1 K-1",
    "Thermal conductivity of the crust (constant)",
    "Turcotte & Schubert 2002, ch. 4 (from memory)",
    1.0,
    5.0,
)
MANTLE_CONDUCTIVITY_W_M_K = _c(
    "mantle_conductivity_w_m_k",
    3.0,
    "W m-1 K-1",
    "Thermal conductivity of the lithospheric mantle (constant)",
    "Turcotte & Schubert 2002, ch. 4 (from memory)",
    1.0,
    6.0,
)
MANTLE_POTENTIAL_TEMPERATURE_C = _c(
    "mantle_potential_temperature_c",
    1350.0,
    "degC",
    "Potential temperature of the convecting upper mantle (ambient, MORB source)",
    "Herzberg, Condie & Korenaga 2010, EPSL 292:79",
    1200.0,
    1700.0,
)
ADIABAT_GRADIENT_K_KM = _c(
    "adiabat_gradient_k_km",
    0.45,
    "K km-1",
    "Temperature gradient of the sub-lithospheric mantle adiabat (linear approximation)",
    "approximates the upper-mantle adiabat of Katsura 2022, JGR (secondary source)",
    0.2,
    0.8,
)
LAB_MAX_DEPTH_KM = _c(
    "lab_max_depth_km",
    350.0,
    "km",
    "Deepest thermal lithosphere base searched; deeper crossings are reported as nodata",
    "common practice (thickest cratonic roots ~250-300 km)",
    100.0,
    660.0,
)

# --------------------------------------------------------------------------------------
# Oceanic lithosphere (Turcotte & Schubert 2002 section 4-16; Stein & Stein 1992)
# --------------------------------------------------------------------------------------
GDH1_PLATE_THICKNESS_KM = _c(
    "gdh1_plate_thickness_km",
    95.0,
    "km",
    "Plate thickness of the GDH1 cooling model (bounds the oceanic thermal lithosphere)",
    "Stein & Stein 1992, Nature 359:123",
    50.0,
    150.0,
)
GDH1_BASAL_TEMPERATURE_C = _c(
    "gdh1_basal_temperature_c",
    1450.0,
    "degC",
    "Basal temperature of the GDH1 plate model",
    "Stein & Stein 1992, Nature 359:123",
    1200.0,
    1600.0,
)
GDH1_CONDUCTIVITY_W_M_K = _c(
    "gdh1_conductivity_w_m_k",
    3.138,
    "W m-1 K-1",
    "Thermal conductivity of the GDH1 plate model",
    "Stein & Stein 1992 (from memory; reproduces the 510 mW m-2 Ma^1/2 coefficient)",
    1.0,
    6.0,
)
GDH1_HEAT_CAPACITY_J_KG_K = _c(
    "gdh1_heat_capacity_j_kg_k",
    1171.0,
    "J kg-1 K-1",
    "Specific heat of the GDH1 plate model",
    "Stein & Stein 1992, Nature 359:123",
    500.0,
    2000.0,
)
GDH1_DENSITY_KG_M3 = _c(
    "gdh1_density_kg_m3",
    3330.0,
    "kg m-3",
    "Mantle density of the GDH1 plate model",
    "Stein & Stein 1992, Nature 359:123",
    3000.0,
    3600.0,
)
MANTLE_THERMAL_DIFFUSIVITY_M2_S = _c(
    "mantle_thermal_diffusivity_m2_s",
    0.805e-6,
    "m2 s-1",
    "Thermal diffusivity of oceanic mantle lithosphere (k / (rho c_p) of GDH1)",
    "Stein & Stein 1992 constants: 3.138 / (3330 x 1171)",
    1.0e-7,
    3.0e-6,
)
BOUNDARY_LAYER_ERF_ARGUMENT = _c(
    "boundary_layer_erf_argument",
    1.16,
    "1",
    "erf argument defining the half-space thermal boundary layer (T reaches 90 % of the "
    "interior temperature; thickness 2 x 1.16 sqrt(kappa t) = 2.32 sqrt(kappa t))",
    "Turcotte & Schubert 2002, section 4-16 (from memory)",
    0.5,
    2.0,
)
OCEANIC_GEOTHERM = _c(
    "oceanic_geotherm",
    "half_space",
    "",
    "Geotherm used for oceanic cells: half-space cooling with the age implied by heat flow, "
    "or the same conductive model as continents",
    "Turcotte & Schubert 2002 section 4-16; Stein & Stein 1992",
    choices=("half_space", "conductive"),
)
OCEANIC_CRUST_MAX_THICKNESS_KM = _c(
    "oceanic_crust_max_thickness_km",
    12.0,
    "km",
    "Cells with thinner crust are treated as oceanic lithosphere",
    "common practice (normal oceanic crust 7.1 +/- 0.8 km, White, McKenzie & O'Nions 1992, "
    "from memory)",
    5.0,
    25.0,
)
OCEANIC_MAX_AGE_MA = _c(
    "oceanic_max_age_ma",
    200.0,
    "Ma",
    "Oldest plate age inferred from heat flow (older seafloor is not preserved)",
    "common practice (oldest in-situ oceanic crust ~180-200 Ma)",
    50.0,
    300.0,
)

# --------------------------------------------------------------------------------------
# Outputs of the thermal-state algorithm
# --------------------------------------------------------------------------------------
TEMPERATURE_DEPTHS_KM = _c(
    "temperature_depths_km",
    (5.0, 10.0, 20.0),
    "km",
    "Depths at which a temperature map is written",
    "common practice (drilling reach, mid and lower crust)",
    0.0,
    300.0,
)
ISOTHERMS_C = _c(
    "isotherms_c",
    (350.0, 600.0),
    "degC",
    "Further isotherms whose depth is mapped (besides the direct-use, binary and flash "
    "isotherms): 350 degC (brittle-ductile transition of quartz-rich crust), 600 degC (near "
    "the wet granite solidus)",
    "common practice",
    20.0,
    1600.0,
)

# --------------------------------------------------------------------------------------
# Global reference values (used in checks and documentation, not as parameters)
# --------------------------------------------------------------------------------------
GLOBAL_MEAN_HEAT_FLOW_MW_M2 = {"continents": 65.0, "oceans": 101.0, "global": 87.0}
"""Global mean surface heat flow, mW m-2 (Pollack, Hurter & Johnson 1993, Rev. Geophys. 31:267)."""

# --------------------------------------------------------------------------------------
# Mantle melting: Katz, Spiegelman & Langmuir 2003, G3 4(9):1073, Table 2
# (dry and hydrous peridotite melting, isentropic decompression)
# --------------------------------------------------------------------------------------
_KATZ = "Katz, Spiegelman & Langmuir 2003, G3 4(9):1073, Table 2"
KATZ_SOLIDUS_A1_C = _c(
    "katz_solidus_a1_c", 1085.7, "degC", "Dry peridotite solidus at P = 0 (A1, eq. 4)", _KATZ
)
KATZ_SOLIDUS_A2_C_GPA = _c(
    "katz_solidus_a2_c_gpa", 132.9, "degC GPa-1", "Dry solidus, linear term (A2, eq. 4)", _KATZ
)
KATZ_SOLIDUS_A3_C_GPA2 = _c(
    "katz_solidus_a3_c_gpa2", -5.1, "degC GPa-2", "Dry solidus, quadratic term (A3, eq. 4)", _KATZ
)
KATZ_LHERZOLITE_LIQUIDUS_B1_C = _c(
    "katz_lherzolite_liquidus_b1_c",
    1475.0,
    "degC",
    "Lherzolite liquidus at P = 0 (B1, eq. 5)",
    _KATZ,
)
KATZ_LHERZOLITE_LIQUIDUS_B2_C_GPA = _c(
    "katz_lherzolite_liquidus_b2_c_gpa",
    80.0,
    "degC GPa-1",
    "Lherzolite liquidus, linear term (B2, eq. 5)",
    _KATZ,
)
KATZ_LHERZOLITE_LIQUIDUS_B3_C_GPA2 = _c(
    "katz_lherzolite_liquidus_b3_c_gpa2",
    -3.2,
    "degC GPa-2",
    "Lherzolite liquidus, quadratic term (B3, eq. 5)",
    _KATZ,
)
KATZ_LIQUIDUS_C1_C = _c(
    "katz_liquidus_c1_c", 1780.0, "degC", "True (dunite) liquidus at P = 0 (C1, eq. 10)", _KATZ
)
KATZ_LIQUIDUS_C2_C_GPA = _c(
    "katz_liquidus_c2_c_gpa", 45.0, "degC GPa-1", "True liquidus, linear term (C2, eq. 10)", _KATZ
)
KATZ_LIQUIDUS_C3_C_GPA2 = _c(
    "katz_liquidus_c3_c_gpa2",
    -2.0,
    "degC GPa-2",
    "True liquidus, quadratic term (C3, eq. 10)",
    _KATZ,
)
KATZ_CPX_REACTION_R1 = _c(
    "katz_cpx_reaction_r1",
    0.50,
    "1",
    "Clinopyroxene reaction coefficient at P = 0 (r1, eq. 6; also written r0)",
    _KATZ,
)
KATZ_CPX_REACTION_R2_GPA = _c(
    "katz_cpx_reaction_r2_gpa",
    0.08,
    "GPa-1",
    "Pressure dependence of the clinopyroxene reaction coefficient (r2, eq. 6)",
    _KATZ,
)
KATZ_BETA1 = _c(
    "katz_beta1", 1.50, "1", "Melt-fraction exponent while cpx remains (beta1, eq. 3)", _KATZ
)
KATZ_BETA2 = _c(
    "katz_beta2", 1.50, "1", "Melt-fraction exponent after cpx is exhausted (beta2, eq. 9)", _KATZ
)
KATZ_WATER_SOLIDUS_K = _c(
    "katz_water_solidus_k",
    43.0,
    "K wt%-0.75",
    "Solidus depression per (wt% H2O in melt)^gamma (K, eq. 16)",
    _KATZ,
)
KATZ_WATER_SOLIDUS_GAMMA = _c(
    "katz_water_solidus_gamma",
    0.75,
    "1",
    "Exponent of the solidus depression (gamma, eq. 16)",
    _KATZ,
)
KATZ_WATER_SATURATION_CHI1 = _c(
    "katz_water_saturation_chi1",
    12.00,
    "wt% GPa-0.6",
    "Water saturation of the melt, power-law term (chi1, eq. 17)",
    _KATZ,
)
KATZ_WATER_SATURATION_CHI2 = _c(
    "katz_water_saturation_chi2",
    1.00,
    "wt% GPa-1",
    "Water saturation of the melt, linear term (chi2, eq. 17)",
    _KATZ,
)
KATZ_WATER_SATURATION_LAMBDA = _c(
    "katz_water_saturation_lambda",
    0.60,
    "1",
    "Exponent of the water saturation pressure dependence (lambda, eq. 17)",
    _KATZ,
)
CPX_MASS_FRACTION = _c(
    "cpx_mass_fraction",
    0.17,
    "1",
    "Modal clinopyroxene mass fraction of the fertile peridotite source (M_cpx, eq. 7)",
    "Katz, Spiegelman & Langmuir 2003 (0.17 as used in two open implementations; the paper's "
    "Fig. 2 caption reportedly uses 0.15 - secondary source)",
    0.05,
    0.30,
)
WATER_PARTITION_COEFFICIENT = _c(
    "water_partition_coefficient",
    0.01,
    "1",
    "Bulk solid/melt partition coefficient of H2O (D_H2O, eq. 18)",
    _KATZ + " (Kelley et al. 2006, JGR 111:B09208 use 0.012 - secondary source)",
    0.001,
    0.1,
)
ENTROPY_OF_FUSION_J_KG_K = _c(
    "entropy_of_fusion_j_kg_k",
    300.0,
    "J kg-1 K-1",
    "Entropy change on melting of peridotite (Delta S)",
    _KATZ + " (McKenzie 1984 used 356, secondary source)",
    100.0,
    600.0,
)
MANTLE_HEAT_CAPACITY_J_KG_K = _c(
    "mantle_heat_capacity_j_kg_k", 1000.0, "J kg-1 K-1", "Specific heat c_P of mantle", _KATZ
)
SOLID_MANTLE_EXPANSIVITY_PER_K = _c(
    "solid_mantle_expansivity_per_k",
    4.0e-5,
    "K-1",
    "Thermal expansivity of solid mantle (alpha_s)",
    _KATZ,
)
MANTLE_MELT_EXPANSIVITY_PER_K = _c(
    "mantle_melt_expansivity_per_k",
    6.8e-5,
    "K-1",
    "Thermal expansivity of mantle melt (alpha_f)",
    _KATZ,
)
SOLID_MANTLE_DENSITY_KG_M3 = _c(
    "solid_mantle_density_kg_m3",
    3300.0,
    "kg m-3",
    "Density of solid mantle (rho_s); also sets lithostatic pressure P = rho_s g z",
    _KATZ,
)
MANTLE_MELT_DENSITY_KG_M3 = _c(
    "mantle_melt_density_kg_m3", 2900.0, "kg m-3", "Density of mantle melt (rho_f)", _KATZ
)
GRAVITY_M_S2 = _c(
    "gravity_m_s2",
    9.81,
    "m s-2",
    "Gravitational acceleration used for lithostatic pressure",
    "common practice (standard surface gravity, rounded)",
)
H2O_SATURATED_PERIDOTITE_SOLIDUS_C = _c(
    "h2o_saturated_peridotite_solidus_c",
    810.0,
    "degC",
    "Experimental H2O-saturated peridotite solidus, nearly isothermal over 3-6 GPa "
    "(reference value; the Katz parameterization is 120-140 K hotter at 3 GPa)",
    "Till, Grove & Withers 2012, CMP 163:669 (800-820 degC)",
)

# --------------------------------------------------------------------------------------
# Decompression melting column (McKenzie & Bickle 1988 melt thickness) and its table
# --------------------------------------------------------------------------------------
MANTLE_WATER_WT_PCT = _c(
    "mantle_water_wt_pct",
    0.01,
    "wt%",
    "Bulk H2O of the ambient (MORB-source) upper mantle",
    "Hirschmann 2006, Annu. Rev. Earth Planet. Sci. 34:629 (50-200 ppm H2O in the upper "
    "mantle, abstract); Kelley et al. 2006, JGR 111:B09208 (ridges < 0.05 wt%)",
    0.0,
    0.5,
)
MELT_THICKNESS_DENSITY_SCALING = _c(
    "melt_thickness_density_scaling",
    "none",
    "",
    "Column melt thickness as the integral of melt fraction over depth ('none', McKenzie & "
    "Bickle 1988) or that integral times rho_s / rho_f ('solid_to_melt', volume of melt)",
    "McKenzie & Bickle 1988, J. Petrol. 29:625",
    choices=("none", "solid_to_melt"),
)
MELTING_TABLE_MIN_POTENTIAL_TEMPERATURE_C = _c(
    "melting_table_min_potential_temperature_c",
    1200.0,
    "degC",
    "Lowest potential temperature in the precomputed melting table",
    "common practice (below the 1280-1400 degC ambient range of Herzberg et al. 2007)",
    900.0,
    1700.0,
)
MELTING_TABLE_MAX_POTENTIAL_TEMPERATURE_C = _c(
    "melting_table_max_potential_temperature_c",
    1700.0,
    "degC",
    "Highest potential temperature in the precomputed melting table",
    "common practice (ambient 1350 degC plus the largest plume excess, +300 K, Herzberg et "
    "al. 2007)",
    1300.0,
    1800.0,
)
MELTING_TABLE_MAX_WATER_WT_PCT = _c(
    "melting_table_max_water_wt_pct",
    0.1,
    "wt%",
    "Highest bulk mantle water in the precomputed melting table",
    "common practice (twice the ridge-source upper bound of Kelley et al. 2006)",
    0.001,
    1.0,
)
MELTING_TABLE_DEPTH_STEP_KM = _c(
    "melting_table_depth_step_km",
    1.0,
    "km",
    "Depth step of the precomputed melting table",
    "common practice (chosen so that table interpolation stays within 0.05 km of melt "
    "thickness and 0.002 of melt fraction against direct integration)",
    0.1,
    5.0,
)
MELTING_TABLE_MAX_DEPTH_KM = _c(
    "melting_table_max_depth_km",
    300.0,
    "km",
    "Deepest point of the melting columns (start of the isentrope)",
    "common practice (about 9.7 GPa, inside the range of the Katz 2003 solidus, which peaks "
    "near 13 GPa)",
    50.0,
    400.0,
)

# --------------------------------------------------------------------------------------
# Flux (water-added) melting in the mantle wedge above a subducting slab
# --------------------------------------------------------------------------------------
ARC_SLAB_DEPTH_KM = _c(
    "arc_slab_depth_km",
    105.0,
    "km",
    "Slab depth beneath the centre of the sub-arc window where slab water reaches the hot "
    "wedge (global mean slab depth beneath volcanic fronts)",
    "Syracuse & Abers 2006, G3 7:Q05017 (mean 105 km; segment means 72-173 km); England, "
    "Engdahl & Thatcher 2004, GJI 156:377 (65-130 km)",
    65.0,
    173.0,
)
ARC_WINDOW_HALF_WIDTH_KM = _c(
    "arc_window_half_width_km",
    25.0,
    "km",
    "Half-width of the sub-arc window of slab depths with full water supply (default window "
    "80-130 km)",
    "common practice (spans most of the 65-130 km range of England, Engdahl & Thatcher 2004 "
    "around the 105 km mean of Syracuse & Abers 2006)",
    5.0,
    60.0,
)
BEHIND_ARC_TAPER_KM = _c(
    "behind_arc_taper_km",
    70.0,
    "km",
    "Slab-depth interval behind the sub-arc window over which slab water supply falls "
    "linearly to zero (default: to 200 km slab depth)",
    "common practice (antigorite breakdown releases the last large water flux at 150-200 km, "
    "Ulmer & Trommsdorff 1995, Science 268:858; back-arc source water decreases away from the "
    "trench, Kelley et al. 2006, JGR 111:B09208)",
    1.0,
    200.0,
)
WEDGE_TEMPERATURE_C = _c(
    "wedge_temperature_c",
    1350.0,
    "degC",
    "Temperature of the hot mantle-wedge core where flux melting happens",
    "Kelley et al. 2010, J. Petrol. 51:1711 (Mariana arc melts equilibrate at > 1300 degC from "
    "mantle of potential temperature ~1350 degC, abstract); Syracuse, van Keken & Abers 2010, "
    "PEPI (wedge core 1300-1450 degC, from memory)",
    1000.0,
    1600.0,
)
WEDGE_MELTING_DEPTH_KM = _c(
    "wedge_melting_depth_km",
    60.0,
    "km",
    "Depth of the wedge melting region (sets its pressure, P = rho_s g z)",
    "Kelley et al. 2010, J. Petrol. 51:1711 (arc melts equilibrate at 34-87 km beneath the "
    "Mariana arc, abstract; 60 km is mid-range)",
    20.0,
    150.0,
)
WEDGE_WATER_WT_PCT = _c(
    "wedge_water_wt_pct",
    0.3,
    "wt%",
    "Bulk H2O of the wedge melting region where the slab delivers its full water supply",
    "Kelley et al. 2006, JGR 111:B09208 (back-arc sources up to 0.5 wt% or more, rising "
    "toward the trench, abstract); Kelley et al. 2010 (arc sources extend that trend to more "
    "water); 0.3 wt% chosen within that range",
    0.0,
    2.0,
)

# --------------------------------------------------------------------------------------
# Crustal melting (anatexis) and heating by mafic underplating
# --------------------------------------------------------------------------------------
WET_GRANITE_SOLIDUS_PRESSURES_GPA = _c(
    "wet_granite_solidus_pressures_gpa",
    (0.1, 0.2, 1.0, 2.5, 3.5),
    "GPa",
    "Pressures of the water-saturated granite solidus nodes",
    "0.2-3.5 GPa: Stern & Wyllie (authors from memory) 1973, EPSL, 'Water-saturated and "
    "undersaturated melting relations of a granite to 35 kilobars'; 0.1 GPa: haplogranite "
    "minimum, Tuttle & Bowen 1958, GSA Memoir 74 (from memory)",
)
WET_GRANITE_SOLIDUS_TEMPERATURES_C = _c(
    "wet_granite_solidus_temperatures_c",
    (720.0, 680.0, 620.0, 655.0, 700.0),
    "degC",
    "Water-saturated granite solidus at the pressures of wet_granite_solidus_pressures_gpa",
    "same as wet_granite_solidus_pressures_gpa",
)
CRUST_DENSITY_KG_M3 = _c(
    "crust_density_kg_m3",
    2800.0,
    "kg m-3",
    "Mean density of continental crust, for lithostatic pressure in the crust",
    "common practice (2.8-2.85 g cm-3 average continental crust)",
    2500.0,
    3100.0,
)
WATER_SATURATED_MELT_FRACTION = _c(
    "water_saturated_melt_fraction",
    0.02,
    "1",
    "Melt fraction reached by fluid-present melting between the wet solidus and the start of "
    "muscovite dehydration melting (limited by the little free water of deep crust)",
    "Clemens & Vielzeuf 1987, EPSL 86:287 (free water is scarce, so water-saturated melting "
    "makes little melt; value from memory)",
    0.0,
    0.1,
)
MUSCOVITE_MELTING_ONSET_C = _c(
    "muscovite_melting_onset_c",
    700.0,
    "degC",
    "Start of fluid-absent (dehydration) melting of muscovite",
    "Thompson 1982; Le Breton & Thompson 1988, CMP 99:226 (muscovite then biotite stages; "
    "700-750 degC from memory)",
    600.0,
    800.0,
)
MUSCOVITE_MELTING_END_C = _c(
    "muscovite_melting_end_c",
    750.0,
    "degC",
    "End of muscovite dehydration melting",
    "Thompson 1982; Le Breton & Thompson 1988 (from memory)",
    650.0,
    850.0,
)
MUSCOVITE_MELT_FRACTION = _c(
    "muscovite_melt_fraction",
    0.08,
    "1",
    "Cumulative melt fraction when muscovite dehydration melting ends",
    "representative of metapelite experiments (from memory; Clemens & Vielzeuf 1987)",
    0.0,
    0.3,
)
BIOTITE_MELTING_ONSET_C = _c(
    "biotite_melting_onset_c",
    780.0,
    "degC",
    "Start of biotite dehydration melting (760-800 degC at 1 GPa)",
    "Le Breton & Thompson 1988, CMP 99:226",
    700.0,
    900.0,
)
BIOTITE_MELTING_EXTENSIVE_C = _c(
    "biotite_melting_extensive_c",
    850.0,
    "degC",
    "Temperature by which biotite dehydration melting is extensive",
    "Le Breton & Thompson 1988, CMP 99:226; Vielzeuf & Holloway 1988, CMP 98:257 (800-850 "
    "degC in pelites, from memory)",
    750.0,
    950.0,
)
BIOTITE_MELT_FRACTION = _c(
    "biotite_melt_fraction",
    0.25,
    "1",
    "Cumulative melt fraction when biotite dehydration melting is extensive",
    "tens of percent in pelite and greywacke experiments at 850-900 degC (Vielzeuf & Holloway "
    "1988; Le Breton & Thompson 1988; value from memory)",
    0.05,
    0.6,
)
HORNBLENDE_MELTING_ONSET_C = _c(
    "hornblende_melting_onset_c",
    850.0,
    "degC",
    "Start of hornblende (amphibolite) dehydration melting",
    "Clemens & Vielzeuf 1987, EPSL 86:287; Rushmer 1991, CMP 107:41 (850-950+ degC, from memory)",
    750.0,
    1000.0,
)
HORNBLENDE_MELTING_END_C = _c(
    "hornblende_melting_end_c",
    950.0,
    "degC",
    "Temperature by which hornblende dehydration melting is extensive",
    "Clemens & Vielzeuf 1987; Rushmer 1991 (from memory)",
    850.0,
    1100.0,
)
HORNBLENDE_MELT_FRACTION = _c(
    "hornblende_melt_fraction",
    0.40,
    "1",
    "Cumulative melt fraction when hornblende dehydration melting is extensive (the ramp "
    "stays at this value above)",
    "10-40 % melt from amphibolites at 900-1000 degC (Rushmer 1991; Wolf & Wyllie 1994, CMP "
    "115:369; from memory)",
    0.1,
    0.8,
)
UNDERPLATE_HEATED_THICKNESS_KM = _c(
    "underplate_heated_thickness_km",
    10.0,
    "km",
    "Thickness of lower crust that shares the heat of a basaltic underplate",
    "common practice (order of the conductive length of ~1 Myr, sqrt(kappa t) ~ 6 km, and of "
    "the sill-heated zones modelled by Huppert & Sparks 1988, J. Petrol. 29:599, from memory)",
    1.0,
    40.0,
)
MAGMA_LATENT_HEAT_J_KG = _c(
    "magma_latent_heat_j_kg",
    4.0e5,
    "J kg-1",
    "Latent heat of crystallization of basaltic magma",
    "Huppert & Sparks 1988, J. Petrol. 29:599 (from memory)",
    2.0e5,
    6.0e5,
)
MAGMA_HEAT_CAPACITY_J_KG_K = _c(
    "magma_heat_capacity_j_kg_k",
    1000.0,
    "J kg-1 K-1",
    "Specific heat of basaltic magma and of the crust it heats",
    "common practice",
    700.0,
    1500.0,
)
BASALT_DENSITY_KG_M3 = _c(
    "basalt_density_kg_m3",
    2900.0,
    "kg m-3",
    "Density of underplated basaltic magma",
    "Katz, Spiegelman & Langmuir 2003 melt density (rho_f)",
    2600.0,
    3200.0,
)
OROGENIC_MOHO_MAX_TEMPERATURE_C = _c(
    "orogenic_moho_max_temperature_c",
    1000.0,
    "degC",
    "Highest credible Moho temperature under thickened crust; hotter steady-state values are "
    "flagged (orogens are not in thermal steady state)",
    "upper end of the ~700-1000 degC of thickened orogenic crust (from memory)",
    600.0,
    1300.0,
)
THICK_CRUST_KM = _c(
    "thick_crust_km",
    50.0,
    "km",
    "Crust at least this thick counts as thickened (orogenic) for the Moho-temperature flag",
    "Mooney et al. 2004, AGU abstract (crust > 50 km is < 10 % of continental crust)",
    35.0,
    80.0,
)

# --------------------------------------------------------------------------------------
# Magma crystallization ranges at low pressure (reference values for later use)
# --------------------------------------------------------------------------------------
BASALT_LIQUIDUS_C = _c(
    "basalt_liquidus_c",
    1200.0,
    "degC",
    "Liquidus of basalt at low pressure (fully molten above)",
    "common practice (textbook ~1200 degC; Kilauea Iki lava lake, Helz & Thornber 1987, from "
    "memory)",
    1050.0,
    1350.0,
)
BASALT_SOLIDUS_C = _c(
    "basalt_solidus_c",
    1000.0,
    "degC",
    "Solidus of basalt at low pressure (fully solid below; 980-1000 degC)",
    "common practice (textbook; Helz & Thornber 1987, from memory)",
    900.0,
    1100.0,
)
BASALT_ERUPTION_TEMPERATURE_RANGE_C = _c(
    "basalt_eruption_temperature_range_c",
    (1000.0, 1200.0),
    "degC",
    "Typical eruption temperatures of basalt",
    "textbook summary (secondary source)",
)
ANDESITE_ERUPTION_TEMPERATURE_RANGE_C = _c(
    "andesite_eruption_temperature_range_c",
    (800.0, 1000.0),
    "degC",
    "Typical eruption temperatures of andesite",
    "textbook summary (secondary source)",
)
RHYOLITE_ERUPTION_TEMPERATURE_RANGE_C = _c(
    "rhyolite_eruption_temperature_range_c",
    (650.0, 800.0),
    "degC",
    "Typical eruption temperatures of rhyolite",
    "textbook summary (secondary source)",
)
RHYOLITE_LIQUIDUS_C = _c(
    "rhyolite_liquidus_c",
    850.0,
    "degC",
    "Liquidus of dry to moderately wet rhyolite (~800-900 degC)",
    "from memory",
    700.0,
    1000.0,
)

# --------------------------------------------------------------------------------------
# Hotspots and underplating (how melting products feed each other)
# --------------------------------------------------------------------------------------
HOTSPOT_EXCESS_TEMPERATURE_K = _c(
    "hotspot_excess_temperature_k",
    200.0,
    "K",
    "Excess potential temperature at a hotspot centre when its point has no "
    "excess_temperature_k attribute",
    "White & McKenzie 1989, JGR 94:7685 (plume heads +100 to +200 K); Herzberg et al. 2007, "
    "G3 (plumes +200 to +300 K)",
    0.0,
    400.0,
)
HOTSPOT_RADIUS_KM = _c(
    "hotspot_radius_km",
    300.0,
    "km",
    "Radius at which a hotspot's excess temperature falls to 1/e of its peak (Gaussian "
    "profile) when its point has no radius_km attribute",
    "common practice (plume stems a few hundred km across; from memory)",
    20.0,
    2000.0,
)
UNDERPLATE_TRAPPED_FRACTION = _c(
    "underplate_trapped_fraction",
    0.5,
    "1",
    "Fraction of the mantle melt beneath continental crust that stalls at the Moho and heats "
    "the lower crust",
    "common practice; most continental magma stays in the crust (intrusive:extrusive ~10:1, "
    "Crisp 1984, JVGR 20:177)",
    0.0,
    1.0,
)
WEDGE_MELT_COLUMN_KM = _c(
    "wedge_melt_column_km",
    30.0,
    "km",
    "Height of the mantle-wedge melting region; wedge melt fraction x this height gives the "
    "melt thickness delivered beneath an arc",
    "from memory (arc melting regions span a few tens of km in wedge thermal models)",
    1.0,
    100.0,
)

# --------------------------------------------------------------------------------------
# Tectonic-magmatic setting rules (geomelt.tectonics.settings)
# --------------------------------------------------------------------------------------
CONTINENTAL_CRUST_MIN_THICKNESS_KM = _c(
    "continental_crust_min_thickness_km",
    30.0,
    "km",
    "Crust at least this thick makes an arc, hotspot or magma source continental; thinner "
    "crust (ocean floor, oceanic plateaus, island arcs) counts as oceanic",
    "common practice: intra-oceanic arc crust is ~20-35 km, average continental crust ~40 km "
    "(Christensen & Mooney 1995, JGR 100:9761, from memory; Rudnick & Gao 2003)",
    15.0,
    45.0,
)
RIDGE_ZONE_HALF_WIDTH_KM = _c(
    "ridge_zone_half_width_km",
    100.0,
    "km",
    "Cells within this distance of a ridge are mid-ocean ridge (axis and young flanks)",
    "common practice (about 5 Myr of crust at a 40 mm/yr full spreading rate)",
    5.0,
    500.0,
)
RIFT_ZONE_HALF_WIDTH_KM = _c(
    "rift_zone_half_width_km",
    100.0,
    "km",
    "Cells within this distance of a rift axis are continental rift",
    "common practice (continental rift zones are tens to ~200 km wide)",
    5.0,
    500.0,
)
TRANSFORM_ZONE_HALF_WIDTH_KM = _c(
    "transform_zone_half_width_km",
    30.0,
    "km",
    "Cells within this distance of a transform fault are transform setting",
    "common practice (transform valleys and their damage zones are a few tens of km wide)",
    1.0,
    200.0,
)
COLLISION_ZONE_HALF_WIDTH_KM = _c(
    "collision_zone_half_width_km",
    500.0,
    "km",
    "Thickened crust within this distance of a collision suture is continental collision",
    "common practice (the Tibetan plateau extends ~1000 km from the Himalayan front)",
    10.0,
    2000.0,
)
SUBDUCTION_ZONE_MAX_DISTANCE_KM = _c(
    "subduction_zone_max_distance_km",
    700.0,
    "km",
    "Upper-plate cells farther than this from a trench are not forearc, arc or back-arc",
    "common practice; back-arc spreading lies ~50-300 km behind arcs that stand 100-300 km from "
    "the trench (Taylor & Martinez 2003; Dickinson 1973, from memory)",
    100.0,
    2000.0,
)
ARC_MIN_TRENCH_DISTANCE_KM = _c(
    "arc_min_trench_distance_km",
    100.0,
    "km",
    "Without a slab-depth raster: upper-plate cells closer to the trench are forearc",
    "volcanic fronts stand >= 100 km from the trench almost everywhere (Dickinson 1973, "
    "secondary source)",
    20.0,
    400.0,
)
ARC_MAX_TRENCH_DISTANCE_KM = _c(
    "arc_max_trench_distance_km",
    300.0,
    "km",
    "Without a slab-depth raster: upper-plate cells up to this distance from the trench are "
    "arc, farther ones back-arc",
    "trench to volcanic front 100-300 km (Dickinson 1973, secondary source)",
    50.0,
    800.0,
)
HOTSPOT_MIN_EXCESS_TEMPERATURE_K = _c(
    "hotspot_min_excess_temperature_k",
    50.0,
    "K",
    "Cells whose mantle is at least this much hotter than ambient are hotspot settings",
    "common practice (a quarter of a typical +200 K plume excess; White & McKenzie 1989)",
    1.0,
    300.0,
)
MIN_MELT_THICKNESS_KM = _c(
    "min_melt_thickness_km",
    0.5,
    "km",
    "Decompression melting counts as a mechanism where the column makes at least this much melt",
    "common practice: thinner melt columns (a few per cent of melting at most) leave little "
    "extractable melt; the thinnest igneous crust at ultraslow ridges is a few km",
    0.0,
    5.0,
)
MIN_WEDGE_MELT_FRACTION = _c(
    "min_wedge_melt_fraction",
    0.01,
    "1",
    "Flux melting counts as a mechanism where the wedge melt fraction reaches this",
    "common practice (about 1 % melt is the lowest degree that separates from peridotite)",
    0.0,
    0.3,
)
MIN_CRUSTAL_MELT_FRACTION = _c(
    "min_crustal_melt_fraction",
    0.1,
    "1",
    "Crustal heating counts as a mechanism where the crustal melt fraction reaches this",
    "melt percolation threshold ~8 % in felsic crust (Vigneresse, Barbey & Cuney 1996, "
    "J. Petrol. 37:1579, from memory), rounded up",
    0.0,
    0.5,
)
BOUNDARY_REACH_KM = _c(
    "boundary_reach_km",
    1500.0,
    "km",
    "Plate boundaries farther than this from a cell count as absent (distance nodata)",
    "common practice (wider than any subduction-zone upper plate or collision plateau)",
    100.0,
    5000.0,
)

# --------------------------------------------------------------------------------------
# Melt productivity (geomelt.physics.productivity): opening and closing rates of plate
# boundaries, production zones, plume upwelling and the arc wedge flow
# --------------------------------------------------------------------------------------
RIDGE_DEFAULT_RATE_MM_YR = _c(
    "ridge_default_rate_mm_yr",
    50.0,
    "mm yr-1",
    "Full spreading rate used for a ridge line whose rate_mm_yr is missing",
    "common practice: about 3.4 km2 yr-1 of new ocean floor (Rowley 2002, GSA Bull. 114:927, "
    "from memory) made along ~60,000-65,000 km of ridge (from memory) is a mean full rate "
    "of 50-55 mm/yr",
    0.0,
    250.0,
)
RIFT_DEFAULT_RATE_MM_YR = _c(
    "rift_default_rate_mm_yr",
    5.0,
    "mm yr-1",
    "Full extension rate used for a rift line whose rate_mm_yr is missing",
    "common practice: the East African Rift opens at ~1-7 mm/yr (Saria et al. 2014, JGR "
    "119:3584, from memory)",
    0.0,
    50.0,
)
SUBDUCTION_DEFAULT_RATE_MM_YR = _c(
    "subduction_default_rate_mm_yr",
    65.0,
    "mm yr-1",
    "Convergence rate used for a subduction line whose rate_mm_yr is missing",
    "common practice: trench-normal convergence is mostly 20-100 mm/yr, 60-70 mm/yr on "
    "average (Lallemand, Heuret & Boutelier 2005, G3 6:Q09006, from memory)",
    0.0,
    250.0,
)
COLLISION_DEFAULT_RATE_MM_YR = _c(
    "collision_default_rate_mm_yr",
    30.0,
    "mm yr-1",
    "Convergence rate used for a collision line whose rate_mm_yr is missing (collisions make "
    "no mantle-melt production term; the rate is reported for crustal-melting use)",
    "common practice: India-Eurasia ~35-40 mm/yr, Arabia-Eurasia ~20-25 mm/yr (from memory)",
    0.0,
    100.0,
)
RIDGE_PRODUCTION_HALF_WIDTH_KM = _c(
    "ridge_production_half_width_km",
    50.0,
    "km",
    "Half-width of the zone about a ridge axis over which the ridge's melt production is "
    "spread (map footprint of the melting region)",
    "common practice: melting beneath ridges starts at 60-80 km depth and the melting "
    "region is of that order wide near its top (from memory); narrower than the 100 km "
    "mid-ocean ridge setting zone, whose outer part is cooling young crust",
    1.0,
    500.0,
)
RIFT_PRODUCTION_HALF_WIDTH_KM = _c(
    "rift_production_half_width_km",
    50.0,
    "km",
    "Half-width of the zone about a rift axis over which the rift's melt production is spread",
    "common practice: continental rift valleys are ~40-100 km wide (from memory)",
    1.0,
    500.0,
)
PRODUCTION_ZONE_PROFILE = _c(
    "production_zone_profile",
    "uniform",
    "",
    "How ridge and rift production is spread across its zone: 'uniform', or 'triangular' "
    "(peak on the axis, falling linearly to 0 at the zone edge); both integrate to the same "
    "production per km of boundary",
    "common practice",
    choices=("uniform", "triangular"),
)
ARC_WEDGE_FLOW_THICKNESS_KM = _c(
    "arc_wedge_flow_thickness_km",
    5.0,
    "km",
    "Thickness of the mantle-wedge layer that corner flow carries through the melting region "
    "beneath an arc: arc production per km = wedge melt fraction x convergence rate x this",
    "from memory: slab fluids hydrate a layer a few km to ~10 km thick above the slab that "
    "is dragged down through the hot wedge (e.g. Iwamori 1998, EPSL 160:65, from memory); "
    "5 km puts the default arc production (0.12 x 50-90 mm/yr) at 31-55 km3 km-1 Myr-1, "
    "inside the published 20-95 (Reymer & Schubert 1984, Tectonics 3:63; Dimalanta et al. "
    "2002, Tectonophysics 357:269; both from memory)",
    0.5,
    30.0,
)
ARC_PRODUCTION_WIDTH_KM = _c(
    "arc_production_width_km",
    80.0,
    "km",
    "Across-arc width over which arc production is spread: horizontal width of the wedge "
    "with full slab water (the 80-130 km slab-depth window plus half the behind-arc taper "
    "at a ~45 degree slab dip)",
    "common practice (slabs dip ~30-70 degrees beneath arcs, from memory)",
    10.0,
    500.0,
)
PLUME_REFERENCE_UPWELLING_MM_YR = _c(
    "plume_reference_upwelling_mm_yr",
    5.0,
    "mm yr-1",
    "Upwelling velocity of plume mantle through the melting region where its excess "
    "temperature equals plume_reference_excess_temperature_k; it scales with the local "
    "excess temperature, so a Gaussian plume has w = w0 exp(-(r/R)^2)",
    "calibrated (geomelt): a +200 K plume of radius 300 km under a 90 km lid then supplies "
    "0.12 km3/yr, close to the 0.11 km3/yr magma supply of Kilauea in 1952-71 (Swanson 1972, "
    "Science 175:169); its buoyancy flux, ~0.6 Mg/s, is inside the ~0.3-9 Mg/s of hotspots "
    "(Sleep 1990, JGR 95:6715, from memory)",
    0.0,
    500.0,
)
PLUME_REFERENCE_EXCESS_TEMPERATURE_K = _c(
    "plume_reference_excess_temperature_k",
    200.0,
    "K",
    "Excess potential temperature at which plume upwelling equals plume_reference_upwelling_mm_yr",
    "White & McKenzie 1989, JGR 94:7685 (plume heads +100 to +200 K); Herzberg et al. 2007, "
    "G3 (+200 to +300 K)",
    1.0,
    500.0,
)

# --------------------------------------------------------------------------------------
# Screening (geomelt.physics.screening): fuzzy memberships and their combination
# (Zadeh 1965; An, Moon & Rencz 1991; Bonham-Carter 1994, chapter 9)
# --------------------------------------------------------------------------------------
SCREENING_COMBINATION = _c(
    "screening_combination",
    "weighted_sum",
    "",
    "How screening factors combine into a score: 'weighted_sum' (weighted mean, weights "
    "normalised to sum to 1) or 'gamma' (fuzzy gamma operator; weights then only select "
    "factors, a weight of 0 drops one)",
    "An, Moon & Rencz 1991, Can. J. Explor. Geophys. 27:1 (from memory); Bonham-Carter 1994, "
    "Geographic Information Systems for Geoscientists, ch. 9",
    choices=("weighted_sum", "gamma"),
)
FUZZY_GAMMA = _c(
    "fuzzy_gamma",
    0.9,
    "1",
    "Exponent of the fuzzy gamma operator: 0 gives the algebraic product, 1 the algebraic sum",
    "Zimmermann & Zysno 1980, Fuzzy Sets Syst. 4:37 (operator, from memory); values of "
    "0.8-0.975 are usual in mineral-potential work (Bonham-Carter 1994, ch. 9, from memory)",
    0.0,
    1.0,
)
_HEAT_WEIGHT = (
    "geomelt default (expert judgement, not a published weighting); weights are normalised "
    "to sum to 1"
)
SCREENING_TEMPERATURE_DEPTH_KM = _c(
    "screening_temperature_depth_km",
    3.0,
    "km",
    "Depth of the temperature scored by the geothermal temperature factor",
    "common practice (conventional geothermal production wells are 1-3 km deep, rarely 4-5 km; "
    "from memory)",
    0.5,
    10.0,
)
HEAT_SOURCE_TEMPERATURE_ZERO_C = _c(
    "heat_source_temperature_zero_c",
    100.0,
    "degC",
    "Temperature at the screening depth that scores 0 on the temperature factor",
    "common practice (~100 degC: the lower limit of binary power, upper range of direct use)",
    0.0,
    400.0,
)
HEAT_SOURCE_TEMPERATURE_FULL_C = _c(
    "heat_source_temperature_full_c",
    250.0,
    "degC",
    "Temperature at the screening depth that scores 1 on the temperature factor",
    "common practice (high-enthalpy flash reservoirs are ~200-300 degC, from memory)",
    50.0,
    600.0,
)
DIRECT_USE_ISOTHERM_C = _c(
    "direct_use_isotherm_c",
    100.0,
    "degC",
    "Isotherm whose depth is scored for direct use (district heating, industry)",
    "common practice",
    20.0,
    400.0,
)
BINARY_ISOTHERM_C = _c(
    "binary_isotherm_c",
    150.0,
    "degC",
    "Isotherm whose depth is scored for binary-cycle power",
    "common practice (binary plants use ~100-180 degC fluids; DiPippo, Geothermal Power "
    "Plants, from memory)",
    20.0,
    400.0,
)
FLASH_ISOTHERM_C = _c(
    "flash_isotherm_c",
    200.0,
    "degC",
    "Isotherm whose depth is scored for flash-steam power",
    "common practice (flash plants need reservoirs above ~180-200 degC, from memory)",
    20.0,
    400.0,
)
ISOTHERM_DEPTH_FULL_KM = _c(
    "isotherm_depth_full_km",
    2.0,
    "km",
    "An isotherm at most this deep scores 1 on its isotherm-depth factor",
    "common practice (most producing geothermal wells are 1-3 km deep, from memory)",
    0.0,
    10.0,
)
ISOTHERM_DEPTH_ZERO_KM = _c(
    "isotherm_depth_zero_km",
    6.0,
    "km",
    "An isotherm at least this deep scores 0 on its isotherm-depth factor",
    "common practice (the deepest geothermal and EGS wells reach ~5-6 km, from memory)",
    0.5,
    20.0,
)
MELT_PROXIMITY_FULL_KM = _c(
    "melt_proximity_full_km",
    50.0,
    "km",
    "Cells at most this far from predicted melt score 1 on melt proximity",
    "common practice (high-temperature geothermal fields lie within a few tens of km of "
    "young magmatic centres; regional melt maps locate melt to a few tens of km)",
    0.0,
    500.0,
)
MELT_PROXIMITY_ZERO_KM = _c(
    "melt_proximity_zero_km",
    200.0,
    "km",
    "Cells at least this far from predicted melt score 0 on melt proximity",
    "common practice (beyond ~200 km magmatic heat no longer reaches the upper crust)",
    1.0,
    2000.0,
)
HEAT_SOURCE_CRUSTAL_MELT_FULL_FRACTION = _c(
    "heat_source_crustal_melt_full_fraction",
    0.07,
    "1",
    "Crustal melt fraction that scores 1 on the crustal-melt factor (no melt scores 0)",
    "melt becomes interconnected and mobile near 7 vol% (melt connectivity transition, "
    "Rosenberg & Handy 2005, J. Metamorph. Geol. 23:19, from memory)",
    0.001,
    0.5,
)
HEAT_SOURCE_WEIGHT_TEMPERATURE = _c(
    "heat_source_weight_temperature",
    0.30,
    "1",
    "Weight of the temperature-at-depth factor in the heat-source score",
    _HEAT_WEIGHT,
    0.0,
    10.0,
)
HEAT_SOURCE_WEIGHT_DIRECT_USE = _c(
    "heat_source_weight_direct_use",
    0.10,
    "1",
    "Weight of the direct-use isotherm-depth factor in the heat-source score",
    _HEAT_WEIGHT,
    0.0,
    10.0,
)
HEAT_SOURCE_WEIGHT_BINARY = _c(
    "heat_source_weight_binary",
    0.15,
    "1",
    "Weight of the binary-power isotherm-depth factor in the heat-source score",
    _HEAT_WEIGHT,
    0.0,
    10.0,
)
HEAT_SOURCE_WEIGHT_FLASH = _c(
    "heat_source_weight_flash",
    0.15,
    "1",
    "Weight of the flash-power isotherm-depth factor in the heat-source score",
    _HEAT_WEIGHT,
    0.0,
    10.0,
)
HEAT_SOURCE_WEIGHT_MELT_PROXIMITY = _c(
    "heat_source_weight_melt_proximity",
    0.20,
    "1",
    "Weight of the melt-proximity factor in the heat-source score",
    _HEAT_WEIGHT,
    0.0,
    10.0,
)
HEAT_SOURCE_WEIGHT_CRUSTAL_MELT = _c(
    "heat_source_weight_crustal_melt",
    0.10,
    "1",
    "Weight of the crustal-melt factor in the heat-source score",
    _HEAT_WEIGHT,
    0.0,
    10.0,
)

# Mineral-system affinity: membership breakpoints
FLUX_MELT_FRACTION_FULL = _c(
    "flux_melt_fraction_full",
    0.10,
    "1",
    "Wedge (flux) melt fraction that scores 1 on the flux-melting factor (0 melt scores 0)",
    "common practice: arc basalt sources melt by ~10-25 % (Kelley et al. 2010, J. Petrol. "
    "51:1711, from memory); the default sub-arc wedge reaches 0.12",
    0.001,
    0.5,
)
HIGH_DEGREE_MELT_FRACTION_ZERO = _c(
    "high_degree_melt_fraction_zero",
    0.10,
    "1",
    "Mantle melt fraction that scores 0 on the high-degree-melting factor",
    "source sulfide is used up near 20-25 % melting, so only higher-degree melts carry the "
    "chalcophile metals and PGE (Keays 1995, Lithos 34:1; Naldrett 2004; from memory)",
    0.0,
    0.5,
)
HIGH_DEGREE_MELT_FRACTION_FULL = _c(
    "high_degree_melt_fraction_full",
    0.25,
    "1",
    "Mantle melt fraction that scores 1 on the high-degree-melting factor",
    "same as high_degree_melt_fraction_zero",
    0.01,
    0.6,
)
MANTLE_MELT_THICKNESS_ZERO_KM = _c(
    "mantle_melt_thickness_zero_km",
    0.5,
    "km",
    "Column melt thickness that scores 0 on the melt-volume factor",
    "common practice (the decompression-mechanism threshold min_melt_thickness_km)",
    0.0,
    20.0,
)
MANTLE_MELT_THICKNESS_FULL_KM = _c(
    "mantle_melt_thickness_full_km",
    5.0,
    "km",
    "Column melt thickness that scores 1 on the melt-volume factor",
    "common practice (approaching normal oceanic crust, 7.1 +/- 0.8 km, White, McKenzie & "
    "O'Nions 1992, from memory)",
    0.1,
    50.0,
)
CONTINENTAL_CRUST_ZERO_KM = _c(
    "continental_crust_zero_km",
    15.0,
    "km",
    "Crustal thickness that scores 0 on continental character (porphyry, Ni-Cu-PGE) and 1 on "
    "thin, submarine crust (VMS)",
    "common practice: oceanic crust ~7 km, intra-oceanic arcs ~20-35 km, continents ~40 km "
    "(Rudnick & Gao 2003; Christensen & Mooney 1995, JGR 100:9761, from memory)",
    0.0,
    60.0,
)
CONTINENTAL_CRUST_FULL_KM = _c(
    "continental_crust_full_km",
    35.0,
    "km",
    "Crustal thickness that scores 1 on continental character and 0 on thin crust (VMS)",
    "same as continental_crust_zero_km",
    5.0,
    80.0,
)
THICK_CRUST_ZERO_KM = _c(
    "thick_crust_zero_km",
    35.0,
    "km",
    "Crustal thickness that scores 0 on the thickened-crust factor (Sn-W-Li)",
    "common practice: average continental crust ~40 km; collision orogens 60-80 km (Mooney et "
    "al. 2004: crust > 50 km is < 10 % of continents)",
    10.0,
    80.0,
)
THICK_CRUST_FULL_KM = _c(
    "thick_crust_full_km",
    60.0,
    "km",
    "Crustal thickness that scores 1 on the thickened-crust factor (Sn-W-Li)",
    "same as thick_crust_zero_km",
    20.0,
    100.0,
)
ANATEXIS_MELT_FRACTION_FULL = _c(
    "anatexis_melt_fraction_full",
    0.15,
    "1",
    "Crustal melt fraction that scores 1 on the anatexis factor of granite-related Sn-W-Li "
    "(no melt scores 0)",
    "common practice: between the ends of muscovite (~0.08) and biotite (~0.25) dehydration "
    "melting in geomelt's crustal melting ramp",
    0.001,
    0.6,
)

# Mineral-system affinity: factor weights (normalised within each system)
_MIN_WEIGHT = (
    "geomelt default (expert judgement on the deposit-model association cited with the "
    "system; not a published weighting); weights are normalised within the system"
)
PORPHYRY_WEIGHT_SETTING = _c(
    "porphyry_weight_setting",
    0.35,
    "1",
    "Porphyry Cu-Au-Mo: weight of the tectonic-setting factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
PORPHYRY_WEIGHT_FLUX_MELT = _c(
    "porphyry_weight_flux_melt",
    0.25,
    "1",
    "Porphyry Cu-Au-Mo: weight of the flux-melting factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
PORPHYRY_WEIGHT_MAGMA = _c(
    "porphyry_weight_magma",
    0.25,
    "1",
    "Porphyry Cu-Au-Mo: weight of the magma-type factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
PORPHYRY_WEIGHT_CRUST = _c(
    "porphyry_weight_crust",
    0.15,
    "1",
    "Porphyry Cu-Au-Mo: weight of the continental-crust factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
EPITHERMAL_WEIGHT_SETTING = _c(
    "epithermal_weight_setting",
    0.35,
    "1",
    "Epithermal Au-Ag: weight of the tectonic-setting factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
EPITHERMAL_WEIGHT_FLUX_MELT = _c(
    "epithermal_weight_flux_melt",
    0.20,
    "1",
    "Epithermal Au-Ag: weight of the flux-melting factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
EPITHERMAL_WEIGHT_MAGMA = _c(
    "epithermal_weight_magma",
    0.25,
    "1",
    "Epithermal Au-Ag: weight of the magma-type factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
EPITHERMAL_WEIGHT_MELTING = _c(
    "epithermal_weight_melting",
    0.20,
    "1",
    "Epithermal Au-Ag: weight of the active-melting factor (any melting mechanism)",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
NI_CU_PGE_WEIGHT_SETTING = _c(
    "ni_cu_pge_weight_setting",
    0.30,
    "1",
    "Magmatic Ni-Cu-PGE: weight of the tectonic-setting factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
NI_CU_PGE_WEIGHT_MELT_FRACTION = _c(
    "ni_cu_pge_weight_melt_fraction",
    0.25,
    "1",
    "Magmatic Ni-Cu-PGE: weight of the high-degree-melting factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
NI_CU_PGE_WEIGHT_MELT_VOLUME = _c(
    "ni_cu_pge_weight_melt_volume",
    0.10,
    "1",
    "Magmatic Ni-Cu-PGE: weight of the melt-volume (column melt thickness) factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
NI_CU_PGE_WEIGHT_MAGMA = _c(
    "ni_cu_pge_weight_magma",
    0.15,
    "1",
    "Magmatic Ni-Cu-PGE: weight of the magma-type factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
NI_CU_PGE_WEIGHT_CRUST = _c(
    "ni_cu_pge_weight_crust",
    0.20,
    "1",
    "Magmatic Ni-Cu-PGE: weight of the continental-crust factor (crustal sulfur)",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
SN_W_LI_WEIGHT_SETTING = _c(
    "sn_w_li_weight_setting",
    0.30,
    "1",
    "Granite-related Sn-W-Li: weight of the tectonic-setting factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
SN_W_LI_WEIGHT_ANATEXIS = _c(
    "sn_w_li_weight_anatexis",
    0.30,
    "1",
    "Granite-related Sn-W-Li: weight of the crustal-melting (anatexis) factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
SN_W_LI_WEIGHT_MAGMA = _c(
    "sn_w_li_weight_magma",
    0.20,
    "1",
    "Granite-related Sn-W-Li: weight of the magma-type factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
SN_W_LI_WEIGHT_THICK_CRUST = _c(
    "sn_w_li_weight_thick_crust",
    0.20,
    "1",
    "Granite-related Sn-W-Li: weight of the thickened-crust factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
VMS_WEIGHT_SETTING = _c(
    "vms_weight_setting",
    0.35,
    "1",
    "Volcanogenic massive sulfide: weight of the tectonic-setting factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
VMS_WEIGHT_THIN_CRUST = _c(
    "vms_weight_thin_crust",
    0.20,
    "1",
    "Volcanogenic massive sulfide: weight of the thin (submarine) crust factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
VMS_WEIGHT_MAGMA = _c(
    "vms_weight_magma",
    0.20,
    "1",
    "Volcanogenic massive sulfide: weight of the magma-type factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)
VMS_WEIGHT_MELT_VOLUME = _c(
    "vms_weight_melt_volume",
    0.25,
    "1",
    "Volcanogenic massive sulfide: weight of the melt-volume (column melt thickness) factor",
    _MIN_WEIGHT,
    0.0,
    10.0,
)

# --------------------------------------------------------------------------------------
# Prospects: contiguous cells whose screening score passes a threshold become ranked
# polygons (geomelt.io.prospects)
# --------------------------------------------------------------------------------------
_PROSPECT_CHOICE = (
    "geomelt default (a screening convention, not a published value): the score scale is "
    "relative, so set it to the share of the region you can follow up"
)
HEAT_SOURCE_PROSPECT_THRESHOLD = _c(
    "heat_source_prospect_threshold",
    0.6,
    "1",
    "Heat-source score at or above which contiguous cells form a geothermal prospect polygon",
    _PROSPECT_CHOICE,
    0.0,
    1.0,
)
MINERAL_PROSPECT_THRESHOLD = _c(
    "mineral_prospect_threshold",
    0.6,
    "1",
    "Mineral-system affinity score at or above which contiguous cells form a prospect polygon",
    _PROSPECT_CHOICE,
    0.0,
    1.0,
)
PROSPECT_MIN_AREA_KM2 = _c(
    "prospect_min_area_km2",
    2000.0,
    "km2",
    "Smallest prospect polygon kept; smaller patches are dropped as noise of the input grids",
    "geomelt default (about a 45 x 45 km block, twenty cells of a regional grid of 10 km "
    "cells); common practice is to drop patches smaller than the resolution of the coarsest "
    "input",
    0.0,
    1.0e6,
)
