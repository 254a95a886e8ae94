"""Frozen, validated parameter sets built from :mod:`geomelt.constants`.

Each physics family has one parameter set. Its fields take their defaults,
units, valid ranges and sources from the :class:`~geomelt.constants.Constant`
records, so a default is written exactly once. Sets are immutable; use
:meth:`ParameterSet.replace` or :meth:`ParameterSet.from_mapping` to change
values, both of which validate.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from typing import Any, ClassVar

from geomelt import constants as C
from geomelt.constants import Constant
from geomelt.errors import ParameterError

__all__ = ["ParameterSet", "ThermalParameters", "param"]


def param(const: Constant) -> Any:
    """Dataclass field whose default and metadata come from ``const``."""
    return dataclasses.field(default=const.value, metadata={"constant": const})


def _check_number(name: str, value: Any, const: Constant) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        msg = (
            f"parameter {name!r} must be a number in {const.unit or 'no unit'}, "
            f"got {value!r} ({type(value).__name__}); e.g. {name} = {const.value!r}"
        )
        raise ParameterError(msg)
    value = float(value)
    if not math.isfinite(value):
        msg = f"parameter {name!r} must be finite, got {value!r}"
        raise ParameterError(msg)
    lo, hi = const.minimum, const.maximum
    if (lo is not None and value < lo) or (hi is not None and value > hi):
        msg = (
            f"parameter {name!r} = {value:g} {const.unit} is outside its valid range "
            f"[{lo:g}, {hi:g}] {const.unit}; the default is {const.value!r} ({const.source})"
        )
        raise ParameterError(msg)
    return value


@dataclasses.dataclass(frozen=True)
class ParameterSet:
    """Base class of validated parameter sets (subclasses are frozen dataclasses)."""

    title: ClassVar[str] = "parameters"

    def __post_init__(self) -> None:
        for f in dataclasses.fields(self):
            const: Constant = f.metadata["constant"]
            value = getattr(self, f.name)
            if const.choices is not None:
                if value not in const.choices:
                    msg = (
                        f"parameter {f.name!r} = {value!r} is not one of "
                        f"{', '.join(const.choices)}"
                    )
                    raise ParameterError(msg)
                continue
            if isinstance(const.value, tuple):
                if isinstance(value, (int, float)) and not isinstance(value, bool):
                    value = (value,)
                if not isinstance(value, (list, tuple)):
                    msg = (
                        f"parameter {f.name!r} must be a list of numbers in {const.unit}, "
                        f"got {value!r}; e.g. {f.name} = {list(const.value)!r}"
                    )
                    raise ParameterError(msg)
                checked = tuple(sorted({_check_number(f.name, v, const) for v in value}))
                object.__setattr__(self, f.name, checked)
                continue
            object.__setattr__(self, f.name, _check_number(f.name, value, const))

    @classmethod
    def constants(cls) -> dict[str, Constant]:
        """The :class:`Constant` behind each field, by field name."""
        return {f.name: f.metadata["constant"] for f in dataclasses.fields(cls)}

    @classmethod
    def from_mapping(cls, values: Mapping[str, Any]) -> ParameterSet:
        """Build from a mapping, taking only this set's keys (others are ignored)."""
        names = {f.name for f in dataclasses.fields(cls)}
        return cls(**{k: v for k, v in values.items() if k in names})

    def replace(self, **changes: Any) -> ParameterSet:
        """Copy with some values changed (validated)."""
        return dataclasses.replace(self, **changes)

    def as_dict(self) -> dict[str, Any]:
        """Plain ``{name: value}`` mapping (tuples become lists)."""
        out = {}
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            out[f.name] = list(v) if isinstance(v, tuple) else v
        return out


@dataclasses.dataclass(frozen=True)
class ThermalParameters(ParameterSet):
    """Parameters of the lithosphere thermal model.

    Continental cells use a steady conductive geotherm with depth-dependent
    radiogenic heat production (Turcotte & Schubert 2002, section 4-8); the
    thermal lithosphere ends where it meets the mantle adiabat. Oceanic cells
    may use half-space cooling (Turcotte & Schubert 2002, section 4-16) with
    the plate age implied by heat flow through GDH1 (Stein & Stein 1992).
    """

    title: ClassVar[str] = "thermal state"

    surface_temperature_c: float = param(C.SURFACE_TEMPERATURE_C)
    heat_flow_partition: str = param(C.HEAT_FLOW_PARTITION)
    upper_crust_thickness_km: float = param(C.UPPER_CRUST_THICKNESS_KM)
    upper_crust_heat_fraction: float = param(C.UPPER_CRUST_HEAT_FRACTION)
    lower_crust_heat_production_uw_m3: float = param(C.LOWER_CRUST_HEAT_PRODUCTION_UW_M3)
    mantle_heat_production_uw_m3: float = param(C.MANTLE_HEAT_PRODUCTION_UW_M3)
    reduced_heat_flow_fraction: float = param(C.REDUCED_HEAT_FLOW_FRACTION)
    heat_production_depth_scale_km: float = param(C.HEAT_PRODUCTION_DEPTH_SCALE_KM)
    crust_conductivity_w_m_k: float = param(C.CRUST_CONDUCTIVITY_W_M_K)
    mantle_conductivity_w_m_k: float = param(C.MANTLE_CONDUCTIVITY_W_M_K)
    mantle_potential_temperature_c: float = param(C.MANTLE_POTENTIAL_TEMPERATURE_C)
    adiabat_gradient_k_km: float = param(C.ADIABAT_GRADIENT_K_KM)
    lab_max_depth_km: float = param(C.LAB_MAX_DEPTH_KM)
    oceanic_geotherm: str = param(C.OCEANIC_GEOTHERM)
    oceanic_crust_max_thickness_km: float = param(C.OCEANIC_CRUST_MAX_THICKNESS_KM)
    oceanic_max_age_ma: float = param(C.OCEANIC_MAX_AGE_MA)
    mantle_thermal_diffusivity_m2_s: float = param(C.MANTLE_THERMAL_DIFFUSIVITY_M2_S)
    boundary_layer_erf_argument: float = param(C.BOUNDARY_LAYER_ERF_ARGUMENT)
    gdh1_plate_thickness_km: float = param(C.GDH1_PLATE_THICKNESS_KM)
    temperature_depths_km: tuple[float, ...] = param(C.TEMPERATURE_DEPTHS_KM)
    isotherms_c: tuple[float, ...] = param(C.ISOTHERMS_C)

    def __post_init__(self) -> None:
        super().__post_init__()
        if self.mantle_conductivity_w_m_k < self.crust_conductivity_w_m_k:
            msg = (
                "parameter 'mantle_conductivity_w_m_k' "
                f"({self.mantle_conductivity_w_m_k:g}) must not be lower than "
                f"'crust_conductivity_w_m_k' ({self.crust_conductivity_w_m_k:g}): the "
                "lithosphere-base search assumes a geotherm whose gradient never increases "
                "with depth"
            )
            raise ParameterError(msg)
