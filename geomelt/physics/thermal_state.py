"""Thermal state of the lithosphere of every cell: one pure entry point for the pipeline.

:func:`thermal_state` takes crustal thickness and surface heat flow (any array
shape) and returns the Moho temperature and heat flow, the thermal lithosphere
base, temperatures at chosen depths and depths of chosen isotherms.

Continental cells use the steady conductive geotherm of
:mod:`geomelt.physics.geotherm`. Cells with crust thinner than
``params.oceanic_crust_max_thickness_km`` are oceanic; when
``params.oceanic_geotherm == "half_space"`` they get a plate age from their heat
flow through GDH1 (Stein & Stein 1992) and a half-space cooling geotherm with an
adiabatic interior (Turcotte & Schubert 2002, section 4-16; see
:mod:`geomelt.physics.oceanic`). With ``"conductive"`` they use the continental
model with their thin crust.
"""

from __future__ import annotations

import warnings

import numpy as np

from geomelt.errors import OutsideCalibrationWarning
from geomelt.parameters import ThermalParameters
from geomelt.physics.geotherm import DEFAULT_THERMAL_PARAMETERS, ContinentalGeotherm
from geomelt.physics.oceanic import OceanicGeotherm, gdh1_age_from_heat_flow_ma

__all__ = ["THERMAL_STATE_OUTPUTS", "thermal_state"]

THERMAL_STATE_OUTPUTS = (
    "moho_temperature_c",
    "moho_heat_flow_mw_m2",
    "lab_depth_km",
    "plate_age_ma",
    "is_oceanic",
    "temperature_at_depths_c",
    "isotherm_depths_km",
)
"""Keys of the mapping returned by :func:`thermal_state`."""

# Cells per internal block: keeps a block's float64 temporaries to a few MB while numpy's
# per-call overhead stays negligible (2**15 was the fastest of 2**12 .. 2**16 measured).
_BLOCK_CELLS = 1 << 15

_CRUST_HEAT_WARNING = (
    "surface heat flow is lower than the heat the crust produces in the Hasterok & Chapman "
    "partition for some cells; there the heat flow is held at zero from the depth where it "
    "vanishes (isothermal below) and no lithosphere base is found. Check the heat-flow layer "
    "or use heat_flow_partition = 'pollack_chapman'."
)


def thermal_state(
    crustal_thickness_km,
    heat_flow_mw_m2,
    params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS,
) -> dict[str, np.ndarray]:
    """Thermal state of the lithosphere from crustal thickness and surface heat flow.

    Parameters
    ----------
    crustal_thickness_km : array_like
        Crustal thickness (Moho depth below the surface), km.
    heat_flow_mw_m2 : array_like
        Surface heat flow, mW m^-2. Broadcast against ``crustal_thickness_km``.
    params : ThermalParameters, optional
        Thermal parameters, including ``temperature_depths_km`` and ``isotherms_c``.

    Returns
    -------
    dict of str to ndarray
        float32 arrays of the broadcast input shape unless stated:

        ``"moho_temperature_c"``
            Temperature at the Moho, degC.
        ``"moho_heat_flow_mw_m2"``
            Conductive heat flow at the Moho, mW m^-2. Continental: surface heat flow
            minus crustal heat production (0 where the crust would produce more than
            the surface loses). Oceanic half-space cells: the half-space geotherm's heat
            flow at the Moho, scaled so that its surface value is the observed heat
            flow (:func:`~geomelt.physics.oceanic.oceanic_heat_flow_mw_m2`).
        ``"lab_depth_km"``
            Thermal lithosphere base, km. Continental: where the conductive geotherm
            meets the mantle adiabat (NaN if deeper than ``lab_max_depth_km``).
            Oceanic half-space cells: the boundary-layer thickness capped at the GDH1
            plate thickness.
        ``"plate_age_ma"``
            Plate age implied by heat flow through GDH1, Ma, for oceanic cells when
            ``oceanic_geotherm == "half_space"``; NaN elsewhere.
        ``"is_oceanic"``
            bool: crust thinner than ``oceanic_crust_max_thickness_km`` (False where
            inputs are invalid).
        ``"temperature_at_depths_c"``
            Shape ``(len(params.temperature_depths_km), *shape)``: temperature at each
            depth on the full geotherm (adiabat below the LAB), degC.
        ``"isotherm_depths_km"``
            Shape ``(len(params.isotherms_c), *shape)``: shallowest depth of each
            isotherm, km; 0 if the isotherm is at or below the surface temperature, NaN
            if deeper than ``lab_max_depth_km``.

        NaN, infinite or non-positive inputs give NaN in every float output.

    Warns
    -----
    OutsideCalibrationWarning
        When, in the layered partition, some continental cell's crust would produce
        more heat than its surface heat flow (see
        :class:`~geomelt.physics.geotherm.ContinentalGeotherm`).

    Notes
    -----
    The cells are processed in blocks of 32768 so that temporaries stay small; the
    result does not depend on the block size. Steady-state Moho temperatures under
    thick orogenic crust can be hotter than observed (orogens are not in steady
    state); they are returned as computed.

    Examples
    --------
    >>> p = ThermalParameters(surface_temperature_c=0.0)
    >>> out = thermal_state([40.0, 7.0], [60.0, 101.0], p)
    >>> print(out["moho_temperature_c"].round(0), out["is_oceanic"], out["plate_age_ma"].round(1))
    [714. 209.] [False  True] [ nan 25.5]
    """
    # flat views in the input dtype (copies only where inputs broadcast); each block is
    # converted to float64 on its own, so memory stays at the size of the outputs
    crust, q0 = np.broadcast_arrays(np.asarray(crustal_thickness_km), np.asarray(heat_flow_mw_m2))
    shape = crust.shape
    crust, q0 = crust.ravel(), q0.ravel()
    n = crust.size
    n_depths, n_isotherms = len(params.temperature_depths_km), len(params.isotherms_c)
    out = {
        "moho_temperature_c": np.empty(n, np.float32),
        "moho_heat_flow_mw_m2": np.empty(n, np.float32),
        "lab_depth_km": np.empty(n, np.float32),
        "plate_age_ma": np.empty(n, np.float32),
        "is_oceanic": np.empty(n, bool),
        "temperature_at_depths_c": np.empty((n_depths, n), np.float32),
        "isotherm_depths_km": np.empty((n_isotherms, n), np.float32),
    }
    crust_heat_exceeded = False
    for start in range(0, n, _BLOCK_CELLS):
        block = slice(start, min(start + _BLOCK_CELLS, n))
        crust_heat_exceeded |= _fill_block(
            crust[block].astype(np.float64), q0[block].astype(np.float64), params, out, block
        )
    if crust_heat_exceeded:
        warnings.warn(_CRUST_HEAT_WARNING, OutsideCalibrationWarning, stacklevel=2)
    # stacked outputs keep their leading axis
    return {name: values.reshape(values.shape[:-1] + shape) for name, values in out.items()}


def _fill_block(crust, q0, params, out, block) -> bool:
    """Compute one block of cells into ``out[...][block]``; True if crust heat exceeded q0."""
    valid = (crust > 0.0) & (crust < np.inf) & (q0 > 0.0) & (q0 < np.inf)
    is_oceanic = valid & (crust < params.oceanic_crust_max_thickness_km)
    out["is_oceanic"][block] = is_oceanic
    out["plate_age_ma"][block] = np.nan
    if params.oceanic_geotherm != "half_space" or not is_oceanic.any():
        return _fill_continental(crust, q0, None, params, out, block)
    exceeded = False
    n_oceanic = int(np.count_nonzero(is_oceanic))
    if n_oceanic < crust.size:
        # Gathering and scattering a subset costs more than computing the continental
        # model on a minority of oceanic cells too (they are overwritten below).
        if 2 * n_oceanic > crust.size:
            exceeded = _fill_continental(crust, q0, ~is_oceanic, params, out, block)
        else:
            exceeded = _fill_continental(crust, q0, None, params, out, block, is_oceanic)
    _fill_oceanic(crust, q0, is_oceanic, params, out, block)
    return exceeded


def _select(cells, block):
    """Output index and block selector of the ``cells`` mask (None: the whole block)."""
    if cells is None or cells.all():
        return block, slice(None)
    return np.flatnonzero(cells) + block.start, cells


def _fill_continental(crust, q0, cells, params, out, block, overwritten=None) -> bool:
    """Continental geotherm for ``cells`` of the block (all cells if None).

    Returns True if the crust would produce more heat than the surface loses in some
    computed cell that is not ``overwritten`` later.
    """
    where, selector = _select(cells, block)
    geo = ContinentalGeotherm(q0[selector], crust[selector], params)
    exceeded = geo.crust_heat_exceeds_surface
    if overwritten is not None:
        exceeded = exceeded & ~overwritten
    out["moho_temperature_c"][where] = geo.moho_temperature_c
    out["moho_heat_flow_mw_m2"][where] = geo.moho_heat_flow_mw_m2
    out["lab_depth_km"][where] = geo.lab_depth_km
    for i, depth in enumerate(params.temperature_depths_km):
        out["temperature_at_depths_c"][i, where] = geo.temperature_c(depth)
    for i, temperature in enumerate(params.isotherms_c):
        out["isotherm_depths_km"][i, where] = geo.isotherm_depth_km(temperature)
    return bool(exceeded.any())


def _fill_oceanic(crust, q0, cells, params, out, block) -> None:
    """Half-space geotherm with the GDH1 age implied by heat flow, for ``cells``."""
    where, selector = _select(cells, block)
    thickness, heat_flow = crust[selector], q0[selector]
    age = gdh1_age_from_heat_flow_ma(heat_flow, params.oceanic_max_age_ma)
    geo = OceanicGeotherm(age, params)
    moho_temperature, moho_heat_flow = geo.temperature_and_heat_flow(thickness, heat_flow)
    out["plate_age_ma"][where] = age
    out["moho_temperature_c"][where] = moho_temperature
    out["moho_heat_flow_mw_m2"][where] = moho_heat_flow
    out["lab_depth_km"][where] = geo.lab_depth_km
    for i, depth in enumerate(params.temperature_depths_km):
        out["temperature_at_depths_c"][i, where] = geo.temperature_c(depth)
    for i, temperature in enumerate(params.isotherms_c):
        out["isotherm_depths_km"][i, where] = geo.isotherm_depth_km(temperature)
