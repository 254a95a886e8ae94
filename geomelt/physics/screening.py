"""Transparent screening: fuzzy memberships, their combination, and the factors built on them.

Every screen is a set of **factors**, each a fuzzy membership in [0, 1] of one physical
quantity or class (Zadeh 1965), written as its own output so a user can see why a cell
scores as it does, and a **score** that combines them with documented weights. Nothing
is hidden: the breakpoints and weights are parameters
(:class:`~geomelt.parameters.GeothermalScreeningParameters`,
:class:`~geomelt.parameters.MineralScreeningParameters`), and the class affinities of
the mineral systems are the data tables of :data:`MINERAL_SYSTEMS`.

Memberships
    :func:`linear_membership` (a ramp between two breakpoints) and
    :func:`sigmoid_membership` (Zadeh's S-function between the same breakpoints). Both
    increase when ``one_at > zero_at`` and decrease otherwise.

Operators (Zadeh 1965; for mineral-potential mapping An, Moon & Rencz 1991 and
Bonham-Carter 1994, chapter 9)
    fuzzy AND (minimum), fuzzy OR (maximum), algebraic product, algebraic sum
    :math:`1 - \\prod(1 - \\mu_i)`, and the fuzzy gamma operator
    :math:`(\\text{algebraic sum})^{\\gamma} (\\text{algebraic product})^{1 - \\gamma}`
    (Zimmermann & Zysno 1980). Always AND <= each input <= OR, and product <= gamma <=
    sum for gamma in [0, 1]. The alternative :func:`weighted_sum` is the weighted mean
    with weights normalised to sum to 1.

Geothermal heat source (:func:`heat_source_factors`)
    temperature at the screening depth (default 3 km; 0 at 100 degC, 1 at 250 degC);
    depths of the direct-use, binary and flash isotherms (100, 150, 200 degC; 1 when at
    most 2 km deep, 0 from 6 km); distance to the nearest predicted melt (1 within 50 km,
    0 beyond 200 km); crustal melt fraction (0 with none, 1 from 7 %). The score rises
    with heat: a cell hotter at depth, with shallower isotherms, nearer melt or more
    crustal melt never scores lower (every factor is monotone, and both combinations are
    non-decreasing in every factor).

Mineral-system affinity (:func:`mineral_screening`)
    five magmatic-hydrothermal systems, each tied to the settings, melting and magmas of
    its published deposit model:

    ======================  ======================================================
    porphyry_cu_au_mo       arcs, flux melting, intermediate magma, thick crust
                            (Sillitoe 2010; Richards 2003)
    epithermal_au_ag        arcs and extensional arc-related settings, flux
                            melting, intermediate to bimodal magma, active melting
                            (Sillitoe & Hedenquist 2003; Simmons et al. 2005)
    magmatic_ni_cu_pge      continental plumes and rifts, high-degree mantle melts,
                            large melt volumes, mafic magma, crustal sulfur
                            (Naldrett 2004; Barnes & Lightfoot 2005)
    granite_sn_w_li         collision orogens, crustal melting, felsic magma,
                            thickened crust (Lehmann 1990; Cerny et al. 2005)
    vms                     back-arcs and ridges, thin submarine crust, mafic to
                            bimodal magma, decompression melting (Franklin et al.
                            2005; Galley et al. 2007)
    ======================  ======================================================

    The melt-column and melt-fraction factors count only where the mechanism map has
    decompression melting (where the mantle rises); elsewhere the column is potential
    melt and scores 0. These are screens of where today's melting resembles the settings
    in which such deposits form; they say nothing about preserved deposits of older
    systems.

**NaN semantics.** NaN in gives NaN out, in every factor and score. Class codes use the
nodata code 255 (:data:`geomelt.classes.CLASS_NODATA`), which scores NaN; valid classes
that a system's table does not list score 0. Distances to melt are ``inf`` where no melt
lies within reach (factor 0); :func:`distance_to_melt_km` returns that. A factor whose
weight is 0 is left out of its score, so a NaN there does not spread.

References
----------
An, P., Moon, W. M. & Rencz, A. (1991). Application of fuzzy set theory for integration of
geological, geophysical and remote sensing data. Can. J. Explor. Geophys. 27, 1-11 (from
memory).

Barnes, S.-J. & Lightfoot, P. C. (2005). Formation of magmatic nickel sulfide ore deposits
and processes affecting their copper and platinum group element contents. Econ. Geol.
100th Anniversary Volume, 179-213 (pages from memory).

Bonham-Carter, G. F. (1994). Geographic Information Systems for Geoscientists: Modelling
with GIS. Pergamon, Oxford; chapter 9.

Cerny, P., Blevin, P. L., Cuney, M. & London, D. (2005). Granite-related ore deposits.
Econ. Geol. 100th Anniversary Volume, 337-370 (from memory).

Franklin, J. M., Gibson, H. L., Jonasson, I. R. & Galley, A. G. (2005). Volcanogenic
massive sulfide deposits. Econ. Geol. 100th Anniversary Volume, 523-560 (pages from
memory).

Galley, A. G., Hannington, M. D. & Jonasson, I. R. (2007). Volcanogenic massive sulphide
deposits. In Goodfellow, W. D. (ed.), Mineral Deposits of Canada, Geol. Assoc. Canada,
Mineral Deposits Division, Special Publication 5, 141-161 (from memory).

Keays, R. R. (1995). The role of komatiitic and picritic magmatism and S-saturation in the
formation of ore deposits. Lithos 34, 1-18 (from memory).

Lehmann, B. (1990). Metallogeny of Tin. Springer, Berlin.

Naldrett, A. J. (2004). Magmatic Sulfide Deposits: Geology, Geochemistry and Exploration.
Springer, Berlin.

Richards, J. P. (2003). Tectono-magmatic precursors for porphyry Cu-(Mo-Au) deposit
formation. Econ. Geol. 98, 1515-1533.

Richards, J. P. (2009). Postsubduction porphyry Cu-Au and epithermal Au deposits: products
of remelting of subduction-modified lithosphere. Geology 37, 247-250 (from memory).

Sillitoe, R. H. (2010). Porphyry copper systems. Econ. Geol. 105, 3-41.

Sillitoe, R. H. & Hedenquist, J. W. (2003). Linkages between volcanotectonic settings,
ore-fluid compositions, and epithermal precious metal deposits. Soc. Econ. Geol. Special
Publication 10, 315-343 (from memory).

Simmons, S. F., White, N. C. & John, D. A. (2005). Geological characteristics of
epithermal precious and base metal deposits. Econ. Geol. 100th Anniversary Volume,
485-522 (from memory).

Zadeh, L. A. (1965). Fuzzy sets. Information and Control 8, 338-353.

Zadeh, L. A. (1975). The concept of a linguistic variable and its application to
approximate reasoning, I. Information Sciences 8, 199-249 (S-function; from memory).

Zimmermann, H.-J. & Zysno, P. (1980). Latent connectives in human decision making. Fuzzy
Sets and Systems 4, 37-51 (from memory).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Mapping, Sequence
from enum import IntEnum

import numpy as np

from geomelt import constants as C
from geomelt.classes import MagmaType, Mechanism, Setting
from geomelt.parameters import GeothermalScreeningParameters, MineralScreeningParameters

__all__ = [
    "COMBINATION_METHODS",
    "HEAT_SOURCE_OUTPUTS",
    "MINERAL_SYSTEMS",
    "Factor",
    "MineralSystem",
    "class_affinity",
    "combine",
    "distance_to_melt_km",
    "fuzzy_and",
    "fuzzy_gamma",
    "fuzzy_or",
    "fuzzy_product",
    "fuzzy_sum",
    "heat_source_factors",
    "linear_membership",
    "mineral_output_names",
    "mineral_screening",
    "mineral_system_factors",
    "sigmoid_membership",
    "weighted_sum",
]

COMBINATION_METHODS = ("weighted_sum", "gamma")
"""How factors combine into a score (parameter ``screening_combination``)."""


def _f64(*values):
    return np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in values))


def _scalar_if_0d(values):
    return np.asarray(values)[()]


# --------------------------------------------------------------------------------------
# memberships
# --------------------------------------------------------------------------------------
def _ramp(x, zero_at, one_at):
    zero_at, one_at = float(zero_at), float(one_at)
    if not (np.isfinite(zero_at) and np.isfinite(one_at)) or zero_at == one_at:
        msg = f"membership breakpoints must be finite and differ, got {zero_at!r}, {one_at!r}"
        raise ValueError(msg)
    (x,) = _f64(x)
    with np.errstate(invalid="ignore"):
        return np.clip((x - zero_at) / (one_at - zero_at), 0.0, 1.0)


def linear_membership(x, zero_at, one_at):
    """Linear fuzzy membership: 0 at ``zero_at``, 1 at ``one_at``, a straight ramp between.

    Parameters
    ----------
    x : array_like
        Values (any unit).
    zero_at, one_at : float
        Breakpoints in the unit of ``x``. ``one_at > zero_at`` gives an increasing
        membership, ``one_at < zero_at`` a decreasing one.

    Returns
    -------
    membership : ndarray
        In [0, 1]: 0 on the ``zero_at`` side, 1 on the ``one_at`` side; NaN where x is
        NaN; +-inf give 0 or 1.

    Raises
    ------
    ValueError
        If the breakpoints are equal or not finite.

    Notes
    -----
    The simplest fuzzy membership function (Zadeh 1965); the usual choice for mapping
    an evidence layer to favourability (Bonham-Carter 1994, chapter 9).

    Examples
    --------
    >>> print(linear_membership([50.0, 100.0, 175.0, 300.0], 100.0, 250.0))
    [0.  0.  0.5 1. ]
    >>> print(linear_membership([0.0, 125.0, float("inf")], 200.0, 50.0))
    [1.  0.5 0. ]
    """
    return _scalar_if_0d(_ramp(x, zero_at, one_at))


def sigmoid_membership(x, zero_at, one_at):
    """S-shaped fuzzy membership between two breakpoints (Zadeh's S-function).

    Parameters
    ----------
    x : array_like
        Values (any unit).
    zero_at, one_at : float
        Breakpoints: membership 0 at ``zero_at``, 1 at ``one_at``, 0.5 half-way;
        decreasing if ``one_at < zero_at``.

    Returns
    -------
    membership : ndarray
        :math:`2t^2` for :math:`t \\le 1/2` and :math:`1 - 2(1 - t)^2` above, with
        :math:`t` the clipped linear membership; NaN where x is NaN.

    Notes
    -----
    Zadeh's S-function (Zadeh 1975, from memory): piecewise quadratic, flat at both
    breakpoints, steepest (slope 2 per breakpoint interval) at the midpoint. It keeps
    the breakpoints of the linear ramp but favours values well inside the range.

    Examples
    --------
    >>> print(sigmoid_membership([0.0, 25.0, 50.0, 75.0, 100.0], 0.0, 100.0))
    [0.    0.125 0.5   0.875 1.   ]
    """
    t = _ramp(x, zero_at, one_at)
    with np.errstate(invalid="ignore"):
        s = np.where(t <= 0.5, 2.0 * t * t, 1.0 - 2.0 * (1.0 - t) ** 2)
    return _scalar_if_0d(s)


# --------------------------------------------------------------------------------------
# operators
# --------------------------------------------------------------------------------------
def _stack(memberships):
    if len(memberships) == 0:
        msg = "at least one membership array is needed"
        raise ValueError(msg)
    return np.stack(_f64(*memberships))


def fuzzy_and(*memberships):
    """Fuzzy AND: the cell-wise minimum of the memberships (Zadeh 1965).

    Examples
    --------
    >>> print(fuzzy_and([0.2, 0.9], [0.5, 0.4]))
    [0.2 0.4]
    """
    return _scalar_if_0d(np.min(_stack(memberships), axis=0))


def fuzzy_or(*memberships):
    """Fuzzy OR: the cell-wise maximum of the memberships (Zadeh 1965).

    Examples
    --------
    >>> print(fuzzy_or([0.2, 0.9], [0.5, 0.4]))
    [0.5 0.9]
    """
    return _scalar_if_0d(np.max(_stack(memberships), axis=0))


def fuzzy_product(*memberships):
    """Fuzzy algebraic product: :math:`\\prod_i \\mu_i` (never above the smallest input).

    Examples
    --------
    >>> print(fuzzy_product([0.5, 1.0], [0.5, 0.4]))
    [0.25 0.4 ]
    """
    return _scalar_if_0d(np.prod(_stack(memberships), axis=0))


def fuzzy_sum(*memberships):
    """Fuzzy algebraic sum: :math:`1 - \\prod_i (1 - \\mu_i)` (never below the largest input).

    Examples
    --------
    >>> print(fuzzy_sum([0.5, 1.0], [0.5, 0.4]))
    [0.75 1.  ]
    """
    return _scalar_if_0d(1.0 - np.prod(1.0 - _stack(memberships), axis=0))


def fuzzy_gamma(*memberships, gamma):
    """Fuzzy gamma operator: algebraic sum^gamma x algebraic product^(1 - gamma).

    Parameters
    ----------
    *memberships : array_like
        Memberships in [0, 1] (broadcast).
    gamma : float
        In [0, 1]: 0 gives the algebraic product, 1 the algebraic sum.

    Returns
    -------
    ndarray
        Combined membership in [0, 1]; NaN where any input is NaN.

    Notes
    -----
    Zimmermann & Zysno (1980); used for mineral potential by An, Moon & Rencz (1991) and
    Bonham-Carter (1994, chapter 9). Non-decreasing in every input, between the product
    and the sum.

    Examples
    --------
    >>> print(fuzzy_gamma([0.5], [0.5], gamma=0.5).round(4))
    [0.433]
    """
    g = float(gamma)
    if not 0.0 <= g <= 1.0:
        msg = f"gamma must be in [0, 1], got {gamma!r}"
        raise ValueError(msg)
    stack = _stack(memberships)
    total = 1.0 - np.prod(1.0 - stack, axis=0)
    product = np.prod(stack, axis=0)
    return _scalar_if_0d(np.power(total, g) * np.power(product, 1.0 - g))


def _weights(weights, n):
    w = np.asarray(weights, dtype=np.float64)
    if w.shape != (n,):
        msg = f"need {n} weights (one per membership), got {w.shape}"
        raise ValueError(msg)
    if not np.all(np.isfinite(w)) or np.any(w < 0.0) or not np.any(w > 0.0):
        msg = f"weights must be finite, non-negative and not all 0, got {w.tolist()}"
        raise ValueError(msg)
    return w


def weighted_sum(memberships: Sequence, weights: Sequence[float]):
    """Weighted mean of memberships, weights normalised to sum to 1.

    Parameters
    ----------
    memberships : sequence of array_like
        Memberships in [0, 1] (broadcast).
    weights : sequence of float
        One non-negative weight per membership, not all 0 (any scale; they are divided
        by their sum). Memberships with weight 0 are left out, so their NaNs do not
        spread.

    Returns
    -------
    ndarray
        :math:`\\sum_i w_i \\mu_i / \\sum_i w_i`, in [0, 1]; NaN where an included input
        is NaN.

    Notes
    -----
    The weighted-overlay alternative to fuzzy operators (Bonham-Carter 1994, chapter 9):
    transparent and compensatory (a low factor can be made up by high ones).

    Examples
    --------
    >>> print(weighted_sum([[1.0, 0.0], [0.0, 0.0]], [3.0, 1.0]))
    [0.75 0.  ]
    """
    w = _weights(weights, len(memberships))
    keep = [i for i in range(len(w)) if w[i] > 0.0]
    stack = _stack([memberships[i] for i in keep])
    wk = w[keep] / w[keep].sum()
    return _scalar_if_0d(np.tensordot(wk, stack, axes=1))


def combine(
    memberships: Sequence,
    weights: Sequence[float],
    method=C.SCREENING_COMBINATION.value,
    gamma=C.FUZZY_GAMMA.value,
):
    """Combine factor memberships into a score by a weighted mean or the fuzzy gamma operator.

    Parameters
    ----------
    memberships : sequence of array_like
        Factor memberships in [0, 1].
    weights : sequence of float
        Non-negative weights, not all 0. ``weighted_sum`` normalises them; ``gamma``
        uses them only to leave out factors of weight 0.
    method : {"weighted_sum", "gamma"}, optional
        Combination (default ``weighted_sum``).
    gamma : float, optional
        Gamma of the fuzzy gamma operator (default 0.9).

    Returns
    -------
    ndarray
        Score in [0, 1]; NaN where an included factor is NaN.

    Examples
    --------
    >>> print(combine([[1.0], [0.5]], [1.0, 1.0]), combine([[1.0], [0.5]], [1.0, 0.0], "gamma"))
    [0.75] [1.]
    """
    w = _weights(weights, len(memberships))
    if method == "weighted_sum":
        return weighted_sum(memberships, w)
    if method == "gamma":
        return fuzzy_gamma(
            *(m for m, wi in zip(memberships, w, strict=True) if wi > 0), gamma=gamma
        )
    msg = f"method must be one of {', '.join(COMBINATION_METHODS)}, got {method!r}"
    raise ValueError(msg)


# --------------------------------------------------------------------------------------
# geothermal heat source
# --------------------------------------------------------------------------------------
HEAT_SOURCE_OUTPUTS = (
    "heat_source_temperature_factor",
    "heat_source_direct_use_factor",
    "heat_source_binary_factor",
    "heat_source_flash_factor",
    "heat_source_melt_proximity_factor",
    "heat_source_crustal_melt_factor",
    "heat_source_score",
)
"""Names of the arrays returned by :func:`heat_source_factors` (all dimensionless, 0-1)."""


def heat_source_factors(
    temperature_at_depth_c,
    direct_use_isotherm_depth_km,
    binary_isotherm_depth_km,
    flash_isotherm_depth_km,
    distance_to_melt_km,
    crustal_melt_fraction,
    params: GeothermalScreeningParameters | None = None,
) -> dict[str, np.ndarray]:
    """Geothermal heat-source factors of each cell and their combined score.

    Parameters
    ----------
    temperature_at_depth_c : array_like
        Temperature at ``params.screening_temperature_depth_km`` (default 3 km), degC.
    direct_use_isotherm_depth_km, binary_isotherm_depth_km, flash_isotherm_depth_km : array_like
        Depths of the ``direct_use_isotherm_c``, ``binary_isotherm_c`` and
        ``flash_isotherm_c`` isotherms (default 100, 150, 200 degC), km.
    distance_to_melt_km : array_like
        Distance to the nearest cell with predicted melt, km; ``inf`` where none lies
        within reach (see :func:`distance_to_melt_km`).
    crustal_melt_fraction : array_like
        Crustal melt fraction, 0-1.
    params : GeothermalScreeningParameters, optional
        Breakpoints, weights and combination.

    Returns
    -------
    dict of ndarray
        :data:`HEAT_SOURCE_OUTPUTS`: six factors in [0, 1] and ``heat_source_score``.

    Notes
    -----
    Factors (linear memberships, :func:`linear_membership`): temperature, 0 at 100 and 1
    at 250 degC; each isotherm depth, 1 at <= 2 km and 0 at >= 6 km; melt proximity, 1
    within 50 km and 0 beyond 200 km; crustal melt, 0 with no melt and 1 from 0.07.
    Breakpoint sources are on the constants (common practice). The score is
    :func:`combine` of the factors with the ``heat_source_weight_*`` weights (default
    weighted mean). Each factor is non-decreasing in heat (temperature and crustal melt
    up, isotherm depths and distance down) and both combinations are non-decreasing in
    every factor, so the score is too; the parameter set refuses breakpoints that would
    reverse this.

    Examples
    --------
    >>> out = heat_source_factors(175.0, 1.0, 2.0, 4.0, 10.0, 0.0)
    >>> print([round(float(out[k]), 3) for k in HEAT_SOURCE_OUTPUTS])
    [0.5, 1.0, 1.0, 0.5, 1.0, 0.0, 0.675]
    """
    p = params or GeothermalScreeningParameters()
    t, d100, d150, d200, dist, fc = _f64(
        temperature_at_depth_c,
        direct_use_isotherm_depth_km,
        binary_isotherm_depth_km,
        flash_isotherm_depth_km,
        distance_to_melt_km,
        crustal_melt_fraction,
    )
    depth_ramp = (p.isotherm_depth_zero_km, p.isotherm_depth_full_km)
    factors = {
        "heat_source_temperature_factor": _ramp(
            t, p.heat_source_temperature_zero_c, p.heat_source_temperature_full_c
        ),
        "heat_source_direct_use_factor": _ramp(d100, *depth_ramp),
        "heat_source_binary_factor": _ramp(d150, *depth_ramp),
        "heat_source_flash_factor": _ramp(d200, *depth_ramp),
        "heat_source_melt_proximity_factor": _ramp(
            dist, p.melt_proximity_zero_km, p.melt_proximity_full_km
        ),
        "heat_source_crustal_melt_factor": _ramp(fc, 0.0, p.heat_source_crustal_melt_full_fraction),
    }
    weights = (
        p.heat_source_weight_temperature,
        p.heat_source_weight_direct_use,
        p.heat_source_weight_binary,
        p.heat_source_weight_flash,
        p.heat_source_weight_melt_proximity,
        p.heat_source_weight_crustal_melt,
    )
    score = combine(list(factors.values()), weights, p.screening_combination, p.fuzzy_gamma)
    out = {name: _scalar_if_0d(v) for name, v in factors.items()}
    out["heat_source_score"] = score
    return out


def distance_to_melt_km(melt_present, cell_size_km, valid=None):
    """Distance from each cell to the nearest cell with predicted melt, km.

    Parameters
    ----------
    melt_present : array_like of bool, shape (rows, cols)
        True where melt is predicted (e.g. ``melting_mechanism`` not 0 and not nodata).
    cell_size_km : float or (float, float)
        Cell size, km: one value for square cells or (row spacing, column spacing).
    valid : array_like of bool, optional
        False where the cell is nodata; NaN is returned there.

    Returns
    -------
    distance_km : ndarray, shape (rows, cols)
        Euclidean distance between cell centres, km: 0 on melt cells, ``inf`` everywhere
        if the array holds no melt.

    Notes
    -----
    Exact Euclidean distance transform (``scipy.ndimage.distance_transform_edt``) on a
    grid of uniform cell size, so use it on a projected grid (on a geographic grid give
    the local (dy, dx) in km; the result is then approximate away from that latitude).
    This factor needs a neighbourhood: on a window, pad it with a halo at least
    ``melt_proximity_zero_km`` wide (default 200 km) so that distances inside the window
    are exact up to that reach.

    Examples
    --------
    >>> mask = np.zeros((1, 5), bool)
    >>> mask[0, 0] = True
    >>> print(distance_to_melt_km(mask, 10.0))
    [[ 0. 10. 20. 30. 40.]]
    """
    from scipy import ndimage

    mask = np.asarray(melt_present, dtype=bool)
    if mask.ndim != 2:
        msg = f"melt_present must be a 2-D grid, got shape {mask.shape}"
        raise ValueError(msg)
    sampling = np.broadcast_to(np.asarray(cell_size_km, dtype=np.float64), (2,))
    if not np.all(np.isfinite(sampling)) or np.any(sampling <= 0.0):
        msg = f"cell_size_km must be positive, got {cell_size_km!r}"
        raise ValueError(msg)
    if mask.any():
        out = ndimage.distance_transform_edt(~mask, sampling=tuple(sampling))
    else:
        out = np.full(mask.shape, np.inf)
    out = np.asarray(out, dtype=np.float64)
    if valid is not None:
        out = np.where(np.asarray(valid, dtype=bool), out, np.nan)
    return out


# --------------------------------------------------------------------------------------
# mineral-system affinity
# --------------------------------------------------------------------------------------
def class_affinity(codes, table: Mapping[int, float], scheme: type[IntEnum]):
    """Look up an affinity per class code.

    Parameters
    ----------
    codes : array_like
        Class codes of ``scheme`` (integers, e.g. a uint8 class raster; floats allowed).
    table : mapping of class to float
        Affinity in [0, 1] per class; classes of ``scheme`` not listed score 0.
    scheme : IntEnum class
        :class:`~geomelt.classes.Setting` or :class:`~geomelt.classes.MagmaType`.

    Returns
    -------
    ndarray
        Affinity per cell; NaN for the nodata code 255, NaN, and codes not in ``scheme``.

    Examples
    --------
    >>> print(class_affinity([6, 2, 255], {Setting.CONTINENTAL_ARC: 1.0}, Setting))
    [ 1.  0. nan]
    """
    lut = np.full(256, np.nan)
    for member in scheme:
        lut[int(member)] = float(table.get(member, 0.0))
    (c,) = _f64(codes)
    with np.errstate(invalid="ignore"):
        ok = np.isfinite(c) & (c >= 0) & (c <= 255) & (c == np.floor(c))
    index = np.where(ok, c, 255).astype(np.intp)
    return _scalar_if_0d(np.where(ok, lut[index], np.nan))


def _mechanism_bits(codes, bits):
    """1 where any of ``bits`` is set in the mechanism code, 0 where none is, NaN for nodata."""
    (c,) = _f64(codes)
    all_bits = int(Mechanism.DECOMPRESSION | Mechanism.FLUX | Mechanism.CRUSTAL_HEATING)
    with np.errstate(invalid="ignore"):
        ok = np.isfinite(c) & (c >= 0) & (c <= all_bits) & (c == np.floor(c))
    index = np.where(ok, c, 0).astype(np.intp)
    return np.where(ok, np.where(index & int(bits), 1.0, 0.0), np.nan)


def _melting_present(codes):
    """1 where any melting mechanism bit is set, 0 for none, NaN for nodata or bad codes."""
    all_bits = Mechanism.DECOMPRESSION | Mechanism.FLUX | Mechanism.CRUSTAL_HEATING
    return _mechanism_bits(codes, all_bits)


def _realised_decompression(f, values):
    """``values`` where decompression melting happens (mechanism bit set), else 0.

    The melt column and melt fraction of the melting maps are what a column would make
    if it rose; the mechanism map says where the mantle does rise (ridges, rifts,
    back-arcs, plumes), so only there does the column count.
    """
    return values * _mechanism_bits(f["melting_mechanism"], Mechanism.DECOMPRESSION)


@dataclasses.dataclass(frozen=True)
class Factor:
    """One factor of a mineral system: a membership of one input, with its weight parameter.

    Attributes
    ----------
    name : str
        Short name; the output layer is ``<system key>_<name>_factor``.
    inputs : tuple of str
        Per-cell fields it reads.
    weight : str
        Name of its weight in :class:`~geomelt.parameters.MineralScreeningParameters`.
    description : str
        What it measures and its membership.
    evaluate : callable
        ``evaluate(fields, params, system) -> ndarray`` in [0, 1].
    """

    name: str
    inputs: tuple[str, ...]
    weight: str
    description: str
    evaluate: Callable[..., np.ndarray]


@dataclasses.dataclass(frozen=True)
class MineralSystem:
    """A mineral system: its deposit-model association as class affinities and factors.

    Attributes
    ----------
    key : str
        Machine name (prefix of its outputs).
    title : str
        Legend title.
    association : str
        The deposit-model association the factors encode.
    references : tuple of str
        Sources of the association.
    setting_affinity : mapping of Setting to float
        Affinity of each tectonic-magmatic setting (unlisted settings score 0).
    magma_affinity : mapping of MagmaType to float
        Affinity of each magma type (unlisted types score 0).
    factors : tuple of Factor
        The factors, in output order.
    """

    key: str
    title: str
    association: str
    references: tuple[str, ...]
    setting_affinity: Mapping[Setting, float]
    magma_affinity: Mapping[MagmaType, float]
    factors: tuple[Factor, ...]


def _setting_factor(weight):
    return Factor(
        "setting",
        ("setting",),
        weight,
        "affinity of the cell's tectonic-magmatic setting (the system's setting table)",
        lambda f, p, s: class_affinity(f["setting"], s.setting_affinity, Setting),
    )


def _magma_factor(weight):
    return Factor(
        "magma",
        ("magma_type",),
        weight,
        "affinity of the cell's magma type (the system's magma table)",
        lambda f, p, s: class_affinity(f["magma_type"], s.magma_affinity, MagmaType),
    )


def _flux_factor(weight):
    return Factor(
        "flux_melt",
        ("wedge_melt_fraction",),
        weight,
        "flux melting of the mantle wedge: 0 with none, 1 from flux_melt_fraction_full",
        lambda f, p, s: _ramp(f["wedge_melt_fraction"], 0.0, p.flux_melt_fraction_full),
    )


def _melt_volume_factor(weight):
    return Factor(
        "melt_volume",
        ("melt_thickness_km", "melting_mechanism"),
        weight,
        "decompression melt column where decompression melting happens: 0 at "
        "mantle_melt_thickness_zero_km, 1 from mantle_melt_thickness_full_km; 0 where the "
        "mechanism has no decompression",
        lambda f, p, s: _realised_decompression(
            f,
            _ramp(
                f["melt_thickness_km"],
                p.mantle_melt_thickness_zero_km,
                p.mantle_melt_thickness_full_km,
            ),
        ),
    )


def _continental_crust_factor(weight):
    return Factor(
        "crust",
        ("crustal_thickness_km",),
        weight,
        "continental crust: 0 at continental_crust_zero_km, 1 from continental_crust_full_km",
        lambda f, p, s: _ramp(
            f["crustal_thickness_km"], p.continental_crust_zero_km, p.continental_crust_full_km
        ),
    )


_PORPHYRY = MineralSystem(
    key="porphyry_cu_au_mo",
    title="Porphyry Cu-Au-Mo",
    association=(
        "hydrous, oxidised intermediate arc magmas from flux melting of the mantle wedge, "
        "stalled and evolved in thick arc crust, release metal-bearing fluids at shallow depth"
    ),
    references=(
        "Sillitoe 2010, Econ. Geol. 105:3",
        "Richards 2003, Econ. Geol. 98:1515",
        "Richards 2009, Geology 37:247 (post-collisional porphyries, from memory)",
    ),
    setting_affinity={
        Setting.CONTINENTAL_ARC: 1.0,  # Andean-type margins host most large porphyries
        Setting.OCEANIC_ARC: 0.8,  # island-arc porphyries (SW Pacific), Sillitoe 2010
        Setting.CONTINENTAL_COLLISION: 0.4,  # post-collisional remelting, Richards 2009
        Setting.BACK_ARC: 0.3,
        Setting.FOREARC: 0.1,
        Setting.CONTINENTAL_RIFT: 0.1,
        Setting.CONTINENTAL_HOTSPOT: 0.1,
    },
    magma_affinity={
        MagmaType.INTERMEDIATE: 1.0,  # andesite-dacite, Richards 2003
        MagmaType.FELSIC: 0.7,
        MagmaType.BIMODAL: 0.3,
        MagmaType.MAFIC: 0.2,
    },
    factors=(
        _setting_factor("porphyry_weight_setting"),
        _flux_factor("porphyry_weight_flux_melt"),
        _magma_factor("porphyry_weight_magma"),
        _continental_crust_factor("porphyry_weight_crust"),
    ),
)

_EPITHERMAL = MineralSystem(
    key="epithermal_au_ag",
    title="Epithermal Au-Ag",
    association=(
        "shallow hydrothermal systems above arc magmas (high and intermediate sulfidation) "
        "and in extensional arc, back-arc and rift settings with bimodal volcanism (low "
        "sulfidation)"
    ),
    references=(
        "Sillitoe & Hedenquist 2003, SEG Spec. Publ. 10:315 (from memory)",
        "Simmons, White & John 2005, Econ. Geol. 100th Anniv. Vol. (from memory)",
        "Sillitoe 2010, Econ. Geol. 105:3 (epithermal tops of porphyry systems)",
    ),
    setting_affinity={
        Setting.CONTINENTAL_ARC: 1.0,
        Setting.OCEANIC_ARC: 0.9,
        Setting.BACK_ARC: 0.6,  # extensional arc and back-arc (low sulfidation)
        Setting.CONTINENTAL_RIFT: 0.5,  # bimodal rift volcanism (low sulfidation)
        Setting.CONTINENTAL_HOTSPOT: 0.4,
        Setting.CONTINENTAL_COLLISION: 0.3,
        Setting.FOREARC: 0.1,
        Setting.OCEANIC_HOTSPOT: 0.1,
    },
    magma_affinity={
        MagmaType.INTERMEDIATE: 1.0,
        MagmaType.FELSIC: 0.8,
        MagmaType.BIMODAL: 0.8,
        MagmaType.MAFIC: 0.3,
    },
    factors=(
        _setting_factor("epithermal_weight_setting"),
        _flux_factor("epithermal_weight_flux_melt"),
        _magma_factor("epithermal_weight_magma"),
        Factor(
            "melting",
            ("melting_mechanism",),
            "epithermal_weight_melting",
            "active melting by any mechanism (heat to drive shallow hydrothermal cells): "
            "1 if any melting_mechanism bit is set, else 0",
            lambda f, p, s: _melting_present(f["melting_mechanism"]),
        ),
    ),
)

_NI_CU_PGE = MineralSystem(
    key="magmatic_ni_cu_pge",
    title="Magmatic Ni-Cu-PGE",
    association=(
        "large volumes of high-degree mafic-ultramafic mantle melt from plumes and rifts, "
        "reaching sulfide saturation by taking up crustal sulfur in continental crust"
    ),
    references=(
        "Naldrett 2004, Magmatic Sulfide Deposits (Springer)",
        "Barnes & Lightfoot 2005, Econ. Geol. 100th Anniv. Vol. (from memory)",
        "Keays 1995, Lithos 34:1 (sulfide exhausted near 20-25 % melting, from memory)",
    ),
    setting_affinity={
        Setting.CONTINENTAL_HOTSPOT: 1.0,  # Noril'sk-Talnakh with the Siberian LIP
        Setting.CONTINENTAL_RIFT: 0.9,  # rift-related intrusions, Naldrett 2004
        Setting.OCEANIC_HOTSPOT: 0.4,
        Setting.MID_OCEAN_RIDGE: 0.2,
        Setting.BACK_ARC: 0.2,
        Setting.CONTINENTAL_ARC: 0.1,  # minor arc-related Ni-Cu (from memory)
        Setting.OCEANIC_ARC: 0.1,
        Setting.CONTINENTAL_COLLISION: 0.1,
    },
    magma_affinity={
        MagmaType.MAFIC: 1.0,
        MagmaType.BIMODAL: 0.6,
        MagmaType.INTERMEDIATE: 0.1,
    },
    factors=(
        _setting_factor("ni_cu_pge_weight_setting"),
        Factor(
            "melt_fraction",
            ("melt_fraction_max", "melting_mechanism"),
            "ni_cu_pge_weight_melt_fraction",
            "high-degree mantle melting where decompression melting happens: 0 at "
            "high_degree_melt_fraction_zero, 1 from high_degree_melt_fraction_full; 0 where "
            "the mechanism has no decompression",
            lambda f, p, s: _realised_decompression(
                f,
                _ramp(
                    f["melt_fraction_max"],
                    p.high_degree_melt_fraction_zero,
                    p.high_degree_melt_fraction_full,
                ),
            ),
        ),
        _melt_volume_factor("ni_cu_pge_weight_melt_volume"),
        _magma_factor("ni_cu_pge_weight_magma"),
        _continental_crust_factor("ni_cu_pge_weight_crust"),
    ),
)

_SN_W_LI = MineralSystem(
    key="granite_sn_w_li",
    title="Granite-related Sn-W-Li",
    association=(
        "reduced, peraluminous granites and their pegmatites from melting of thickened "
        "(meta)sedimentary crust in collision orogens and continental back-arcs"
    ),
    references=(
        "Lehmann 1990, Metallogeny of Tin (Springer)",
        "Cerny, Blevin, Cuney & London 2005, Econ. Geol. 100th Anniv. Vol. (from memory)",
    ),
    setting_affinity={
        Setting.CONTINENTAL_COLLISION: 1.0,  # S-type granites and LCT pegmatites
        Setting.BACK_ARC: 0.5,  # continental back-arc tin belts (from memory)
        Setting.CONTINENTAL_ARC: 0.4,
        Setting.CONTINENTAL_HOTSPOT: 0.3,  # anorogenic tin granites (from memory)
        Setting.CONTINENTAL_RIFT: 0.3,
        Setting.STABLE_INTERIOR: 0.1,
    },
    magma_affinity={
        MagmaType.FELSIC: 1.0,
        MagmaType.BIMODAL: 0.4,
        MagmaType.INTERMEDIATE: 0.3,
    },
    factors=(
        _setting_factor("sn_w_li_weight_setting"),
        Factor(
            "anatexis",
            ("crustal_melt_fraction",),
            "sn_w_li_weight_anatexis",
            "crustal melting: 0 with none, 1 from anatexis_melt_fraction_full",
            lambda f, p, s: _ramp(f["crustal_melt_fraction"], 0.0, p.anatexis_melt_fraction_full),
        ),
        _magma_factor("sn_w_li_weight_magma"),
        Factor(
            "thick_crust",
            ("crustal_thickness_km",),
            "sn_w_li_weight_thick_crust",
            "thickened crust: 0 at thick_crust_zero_km, 1 from thick_crust_full_km",
            lambda f, p, s: _ramp(
                f["crustal_thickness_km"], p.thick_crust_zero_km, p.thick_crust_full_km
            ),
        ),
    ),
)

_VMS = MineralSystem(
    key="vms",
    title="Volcanogenic massive sulfide",
    association=(
        "seafloor hydrothermal venting above shallow magma chambers in extending submarine "
        "crust: back-arc basins, rifted arcs and mid-ocean ridges, mafic to bimodal volcanism"
    ),
    references=(
        "Franklin, Gibson, Jonasson & Galley 2005, Econ. Geol. 100th Anniv. Vol. (from memory)",
        "Galley, Hannington & Jonasson 2007, GAC Min. Dep. Div. Spec. Publ. 5 (from memory)",
    ),
    setting_affinity={
        Setting.BACK_ARC: 1.0,  # most ancient VMS formed in extending arcs and back-arcs
        Setting.MID_OCEAN_RIDGE: 0.8,  # Cyprus-type (mafic) deposits, modern vent fields
        Setting.OCEANIC_ARC: 0.7,  # rifted intra-oceanic arcs
        Setting.FOREARC: 0.3,
        Setting.CONTINENTAL_RIFT: 0.3,
        Setting.OCEANIC_HOTSPOT: 0.3,
        Setting.TRANSFORM: 0.3,
        Setting.CONTINENTAL_ARC: 0.2,
    },
    magma_affinity={
        MagmaType.BIMODAL: 1.0,  # bimodal-mafic and bimodal-felsic types
        MagmaType.MAFIC: 0.8,
        MagmaType.FELSIC: 0.6,
        MagmaType.INTERMEDIATE: 0.5,
    },
    factors=(
        _setting_factor("vms_weight_setting"),
        Factor(
            "thin_crust",
            ("crustal_thickness_km",),
            "vms_weight_thin_crust",
            "thin, submarine crust: 1 at continental_crust_zero_km, 0 from "
            "continental_crust_full_km",
            lambda f, p, s: _ramp(
                f["crustal_thickness_km"], p.continental_crust_full_km, p.continental_crust_zero_km
            ),
        ),
        _magma_factor("vms_weight_magma"),
        _melt_volume_factor("vms_weight_melt_volume"),
    ),
)

MINERAL_SYSTEMS: tuple[MineralSystem, ...] = (_PORPHYRY, _EPITHERMAL, _NI_CU_PGE, _SN_W_LI, _VMS)
"""The mineral systems screened by default, in output order."""


def mineral_system_factors(
    system: MineralSystem,
    fields: Mapping[str, np.ndarray],
    params: MineralScreeningParameters | None = None,
) -> dict[str, np.ndarray]:
    """Factors and score of one mineral system.

    Parameters
    ----------
    system : MineralSystem
        One of :data:`MINERAL_SYSTEMS` (or a modified copy, e.g. with
        ``dataclasses.replace(system, setting_affinity={...})``).
    fields : mapping of str to ndarray
        Per-cell arrays named in the system's factor ``inputs``: ``setting``,
        ``magma_type``, ``melting_mechanism`` (class codes, 255 nodata),
        ``wedge_melt_fraction``, ``melt_fraction_max``, ``melt_thickness_km``,
        ``crustal_thickness_km``, ``crustal_melt_fraction``.
    params : MineralScreeningParameters, optional
        Breakpoints, weights and combination.

    Returns
    -------
    dict of ndarray
        One array per factor (by factor name) and ``score``, all in [0, 1]; NaN where
        an included input is NaN or nodata.

    Examples
    --------
    >>> fields = {"setting": 6, "magma_type": 2, "wedge_melt_fraction": 0.12,
    ...           "crustal_thickness_km": 45.0}
    >>> out = mineral_system_factors(MINERAL_SYSTEMS[0], fields)
    >>> print({k: float(v) for k, v in out.items()})
    {'setting': 1.0, 'flux_melt': 1.0, 'magma': 1.0, 'crust': 1.0, 'score': 1.0}
    """
    p = params or MineralScreeningParameters()
    names, arrays, weights = [], [], []
    for factor in system.factors:
        w = getattr(p, factor.weight)
        if w == 0.0 and not all(name in fields for name in factor.inputs):
            continue  # weight 0 and its input not supplied: the factor is left out
        names.append(factor.name)
        arrays.append(np.asarray(factor.evaluate(fields, p, system), dtype=np.float64))
        weights.append(w)
    score = combine(arrays, weights, p.screening_combination, p.fuzzy_gamma)
    arrays = np.broadcast_arrays(*arrays, np.asarray(score))
    out = {name: _scalar_if_0d(a) for name, a in zip(names, arrays, strict=False)}
    out["score"] = _scalar_if_0d(arrays[-1])
    return out


def mineral_output_names(systems: Sequence[MineralSystem] = MINERAL_SYSTEMS) -> list[str]:
    """Output names of :func:`mineral_screening`: ``<key>_<factor>_factor`` and ``<key>_score``.

    Examples
    --------
    >>> mineral_output_names()[:2]
    ['porphyry_cu_au_mo_setting_factor', 'porphyry_cu_au_mo_flux_melt_factor']
    """
    names = []
    for system in systems:
        names += [f"{system.key}_{factor.name}_factor" for factor in system.factors]
        names.append(f"{system.key}_score")
    return names


def mineral_screening(
    fields: Mapping[str, np.ndarray],
    params: MineralScreeningParameters | None = None,
    systems: Sequence[MineralSystem] = MINERAL_SYSTEMS,
) -> dict[str, np.ndarray]:
    """Factors and scores of every mineral system, as flat named arrays.

    Parameters
    ----------
    fields : mapping of str to ndarray
        Per-cell arrays (see :func:`mineral_system_factors`).
    params : MineralScreeningParameters, optional
        Breakpoints, weights and combination.
    systems : sequence of MineralSystem, optional
        Systems to screen (default :data:`MINERAL_SYSTEMS`).

    Returns
    -------
    dict of ndarray
        ``<key>_<factor>_factor`` and ``<key>_score`` for each system
        (:func:`mineral_output_names`), in [0, 1] with NaN for nodata.
    """
    out = {}
    for system in systems:
        result = mineral_system_factors(system, fields, params)
        for name, value in result.items():
            key = f"{system.key}_score" if name == "score" else f"{system.key}_{name}_factor"
            out[key] = value
    return out
