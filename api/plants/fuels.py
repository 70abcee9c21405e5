"""Fuel sections of a plant file -> the engine's FuelProperties."""

from __future__ import annotations

from api.plants.fileformat import FuelSpec
from api.plants.quantities import to_si_number
from engine.fuels import FuelProperties

J_PER_KG = "J/kg"


def fuel_properties(name: str, spec: FuelSpec, *, atmosphere_pa: float) -> FuelProperties:
    """The properties a unit model needs for the fuel ``spec``.

    Raises ``ValueError`` naming the field at fault (``"<field>: <message>"``).
    """
    basis = spec.basis()
    if basis == "heating_value":
        hv = spec.heating_value
        assert hv is not None

        def number(field: str, value: float | str | None, unit: str) -> float | None:
            if value is None:
                return None
            try:
                result = to_si_number(value, unit, atmosphere_pa=atmosphere_pa)
            except ValueError as exc:
                raise ValueError(f"heating_value.{field}: {exc}") from None
            if not result > 0:
                raise ValueError(f"heating_value.{field}: must be positive, got {value!r}")
            return result

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
    # Composition-based fuels need the combustion module; until it is available the
    # file is refused with a clear message rather than guessed at.
    raise ValueError(
        f"{basis}: fuels given by composition are not supported by this build yet; "
        "give a heating_value section"
    )
