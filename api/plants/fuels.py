"""Fuel sections of a plant file -> the engine's FuelProperties.

A fuel is stored as the section given (JSON) and rebuilt from it whenever a model needs
it, so that composition-based properties (the ultimate analysis the heat-loss method
needs, the composition exergy) are never lost in a flattening to columns.
"""

from __future__ import annotations

from api.plants.fileformat import FuelSpec
from api.plants.quantities import to_si_number
from engine.fuels import (
    NORMAL_CUBIC_METRE,
    STANDARD_CUBIC_FOOT,
    STANDARD_CUBIC_FOOT_14_73_PSIA,
    STANDARD_CUBIC_METRE,
    CompositionError,
    FuelProperties,
)

J_PER_KG = "J/kg"
VOLUME_REFERENCES = {
    "normal": NORMAL_CUBIC_METRE,
    "standard": STANDARD_CUBIC_METRE,
    "scf": STANDARD_CUBIC_FOOT,
    "scf_14_73": STANDARD_CUBIC_FOOT_14_73_PSIA,
}


def fuel_properties(name: str, spec: FuelSpec, *, atmosphere_pa: float) -> FuelProperties:
    """The properties a unit model needs for the fuel ``spec``.

    Raises ``ValueError`` naming the field at fault (``"<section>.<field>: <message>"``).
    """
    basis = spec.basis()

    def number(field: str, value: float | str | None, unit: str) -> float | None:
        if value is None:
            return None
        try:
            result = to_si_number(value, unit, atmosphere_pa=atmosphere_pa)
        except ValueError as exc:
            raise ValueError(f"{basis}.{field}: {exc}") from None
        if not result > 0:
            raise ValueError(f"{basis}.{field}: must be positive, got {value!r}")
        return result

    if basis == "heating_value":
        hv = spec.heating_value
        assert hv is not None
        hhv = number("hhv", hv.hhv, J_PER_KG)
        lhv = number("lhv", hv.lhv, J_PER_KG)
        assert hhv is not None
        if lhv is not None and lhv > hhv:
            raise ValueError("heating_value.lhv: the LHV cannot exceed the HHV")
        return FuelProperties(
            name=name,
            hhv_j_per_kg=hhv,
            lhv_j_per_kg=lhv,
            exergy_to_lhv_ratio=hv.exergy_ratio,
            density_kg_per_m3=number("density", hv.density, "kg/m^3"),
            co2_kg_per_j=number("co2", hv.co2, "kg/J"),
        )
    try:
        if basis == "gas":
            g = spec.gas
            assert g is not None
            return FuelProperties.from_gas(
                name,
                g.composition,
                volume_reference=VOLUME_REFERENCES[g.volume_reference],
                compressibility=g.compressibility,
                hhv_j_per_kg=number("hhv", g.hhv, J_PER_KG),
            )
        u = spec.solid if basis == "solid" else spec.liquid
        assert u is not None
        return FuelProperties.from_ultimate_analysis(
            name,
            u.ultimate,
            kind=basis,
            hhv_j_per_kg=number("hhv", u.hhv, J_PER_KG),
            density_kg_per_m3=number("density", u.density, "kg/m^3"),
        )
    except CompositionError as exc:
        field = "composition" if basis == "gas" else "ultimate"
        raise ValueError(f"{basis}.{field}: {exc}") from None
