"""The historian simulator: readings of the demo plant at any instants.

Per instant, vectorised over all instants at once:

1. weather and process demand (:mod:`api.demo.profiles`);
2. the operating state of each unit from its design (:mod:`api.demo.design`): steam
   flows from the demand, steam conditions, flue-gas O2 and temperature and turbine
   section efficiencies from the load, with the gradual faults (fouling, excess air,
   turbine wear) of the schedule added;
3. the forward models of :mod:`engine.simulate` turn that state into the true value of
   every tag (the boilers' fuel flows follow from the heat-loss efficiency, the
   turbines' exhaust states and power from their expansion lines);
4. each instrument reads its true value in its own unit, with meter bias, noise,
   rounding and bounds (:mod:`api.demo.noise`), stuck transmitters and gaps.

Everything depends only on (seed, instant, schedule), never on how the instants are
batched (see :mod:`api.demo.profiles`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from api import measure
from api.demo import PLANT_FILE
from api.demo.design import (
    BB3,
    BOILERS,
    GB1,
    GB2,
    LP_HEADER_BARG,
    MP_HEADER_BARG,
    T_HOUR,
    TG1,
    TG2,
    BoilerDesign,
    TurbineDesign,
)
from api.demo.faults import Fault
from api.demo.noise import TagSpec, tag_specs
from api.demo.profiles import DAY_S, SiteConditions, site_conditions, wander
from api.plants.fileformat import PlantFile, load_yaml
from api.plants.fuels import fuel_properties
from api.plants.quantities import to_si_number
from engine import combustion, heatloss, steam
from engine.catalogue import get_kind
from engine.fuels import FuelProperties
from engine.simulate import boiler_forward, turbine_forward

GB1_SHARE = 0.52
"""Share of tg1's steam raised by gas boiler 1 (the operators' load split). [-]"""


@dataclass
class Simulation:
    """Readings and the truth behind them.

    Attributes
    ----------
    t_ms : ndarray of int64
        Instants, UTC epoch milliseconds.
    readings : DataFrame
        Index ``t_ms``; one column per tag, in the tag's unit; NaN where nothing is sent.
    truth : dict of str to DataFrame
        Per unit slug, the true efficiencies and states (SI) the readings come from.
    """

    t_ms: np.ndarray
    readings: pd.DataFrame
    truth: dict[str, pd.DataFrame] = field(default_factory=dict)


class Simulator:
    """Readings of the demo plant, faults included.

    Parameters
    ----------
    start_ms : int
        The simulation start (fault times count from here), UTC epoch ms.
    faults : list of Fault
        The schedule (:func:`api.demo.faults.default_schedule`).
    seed : int
        Selects weather, process swings and measurement noise.
    noise : bool
        False gives the instruments' true values (rounded), for checks.
    plant_file : Path
        The demo plant file (tags, units of measure, uncertainties, zone, atmosphere).
    """

    def __init__(
        self,
        *,
        start_ms: int,
        faults: list[Fault],
        seed: int = 7,
        noise: bool = True,
        plant_file: Path = PLANT_FILE,
    ) -> None:
        self.plant_file = plant_file
        document = PlantFile.model_validate(load_yaml(plant_file.read_text(encoding="utf-8")))
        self.slug = document.plant.slug
        self.time_zone = document.plant.time_zone
        self.atmosphere_pa = to_si_number(
            document.plant.atmosphere, "Pa", atmosphere_pa=measure.STANDARD_ATMOSPHERE_PA
        )
        self.interval_s = int(
            to_si_number(document.plant.interval or 60, "s", atmosphere_pa=self.atmosphere_pa)
        )
        self.tags: dict[str, TagSpec] = tag_specs(plant_file)
        self.start_ms = int(start_ms)
        self.faults = list(faults)
        self.seed = int(seed)
        self.noise = noise
        self._stuck_values: dict[tuple[int, str], float] = {}
        # Fuels and unit parameters as the service reads them, so that the forward models
        # and the engine work from one configuration.
        self.fuels: dict[str, FuelProperties] = {
            name: fuel_properties(name, spec, atmosphere_pa=self.atmosphere_pa)
            for name, spec in document.fuels.items()
        }
        self.unit_fuel = {slug: unit.fuel for slug, unit in document.units.items()}
        self.parameters: dict[str, dict[str, float]] = {}
        for slug, unit in document.units.items():
            kind = get_kind(unit.kind)
            given = {}
            for name, value in unit.parameters.items():
                declared = kind.parameter(name)
                if declared is not None:
                    given[name] = to_si_number(
                        value, declared.unit, atmosphere_pa=self.atmosphere_pa
                    )
            self.parameters[slug] = kind.resolve_parameters(given)

    # ------------------------------------------------------------------ time axis

    def times(self, start_ms: int, end_ms: int, step_s: float | None = None) -> np.ndarray:
        """Instants in [start, end) on the grid of ``step_s`` (default the plant interval)."""
        step = int((step_s or self.interval_s) * 1000)
        first = -(-int(start_ms) // step) * step
        return np.arange(first, int(end_ms), step, dtype=np.int64)

    def _t_s(self, t_ms: np.ndarray) -> np.ndarray:
        return (np.asarray(t_ms, dtype=np.int64) - self.start_ms) / 1000.0

    def _fault_level(self, kind: str, unit: str, t_s: np.ndarray, section: int = 1) -> np.ndarray:
        total = np.zeros_like(t_s)
        for fault in self.faults:
            if fault.kind == kind and fault.unit == unit and fault.section == section:
                total = total + fault.size * fault.level(t_s)
        return total

    # ------------------------------------------------------------------ physics

    def _barg(self, barg) -> np.ndarray:
        return np.asarray(barg, dtype=float) * 1e5 + self.atmosphere_pa

    def _boiler(
        self,
        design: BoilerDesign,
        steam_flow: np.ndarray,
        abs_s: np.ndarray,
        t_s: np.ndarray,
        site: SiteConditions,
        stream: int,
    ) -> tuple[dict[str, np.ndarray], pd.DataFrame]:
        """Tags and truth of one boiler; ``abs_s`` epoch seconds (weather, swings),
        ``t_s`` seconds since the simulation start (faults)."""
        load = steam_flow / (design.rated_steam_t_per_h * T_HOUR)
        slow = wander(abs_s, self.seed, stream, (0.9 * 3600, 3.3 * 3600, 11.0 * 3600))
        p_steam = self._barg(design.steam_barg + 0.25 * slow)
        t_steam = (
            design.steam_degc_full - design.steam_degc_drop_low_load * (1 - load) ** 2 + 0.8 * slow
        ) + 273.15
        p_drum = p_steam + design.drum_bar_above_steam * 1e5 * load**2
        p_fw = self._barg(design.feedwater_barg - design.feedwater_barg_drop_full * load**2)
        t_fw = design.feedwater_degc_low + design.feedwater_degc_rise_full * load + 273.15
        o2 = (
            design.o2_full
            + design.o2_rise_low_load * np.clip(1 - load, 0, 1) ** 1.5
            + 0.0015 * slow
            + self._fault_level("excess_air", design.slug, t_s)
        )
        t_amb = site.ambient_temperature_k
        t_flue = (
            design.flue_degc_low
            + design.flue_degc_rise_full * load
            + 0.15 * (t_amb - 283.15)
            + 273.15
            + self._fault_level("fouling", design.slug, t_s)
        )
        omega = combustion.humidity_ratio_from_relative_humidity(
            site.relative_humidity, t_amb, self.atmosphere_pa
        )
        fuel = self.fuels[self.unit_fuel[design.slug] or ""]
        param = self.parameters[design.slug]
        ash = fuel.ultimate.ash if fuel.ultimate is not None else 0.0
        ubc = heatloss.unburned_carbon_from_refuse(
            ash,
            param["carbon_in_fly_ash"],
            param["carbon_in_bottom_ash"],
            param["fly_ash_fraction"],
        )
        out = boiler_forward(
            steam_flow,
            p_steam,
            t_steam,
            p_fw,
            t_fw,
            o2,
            t_flue,
            t_amb,
            fuel,
            humidity_ratio=omega,
            blowdown_fraction=design.blowdown_fraction,
            drum_pressure_pa=p_drum,
            surface_loss_fraction=param["surface_loss_fraction"],
            rated_heat_output_w=param["rated_heat_output_w"],
            unburned_carbon_kg_per_kg=ubc,
        )
        prefix = design.tag_prefix
        values = {
            f"{prefix}.fw.flow": out["feedwater_flow_kg_per_s"].to_numpy(),
            f"{prefix}.fw.press": p_fw,
            f"{prefix}.fw.temp": t_fw,
            f"{prefix}.steam.flow": steam_flow,
            f"{prefix}.steam.press": p_steam,
            f"{prefix}.steam.temp": t_steam,
            f"{prefix}.flue.o2": o2,
            f"{prefix}.flue.temp": t_flue,
            f"{prefix}.air.temp": t_amb,
        }
        if design.blowdown_fraction > 0:
            values[f"{prefix}.bd.flow"] = out["blowdown_flow_kg_per_s"].to_numpy()
            values[f"{prefix}.drum.press"] = p_drum
        if fuel.density_kg_per_m3:
            values[f"{prefix}.gas.flow"] = out["fuel_volume_flow_m3_per_s"].to_numpy()
        else:
            values[f"{prefix}.chips.flow"] = out["fuel_mass_flow_kg_per_s"].to_numpy()
        truth = pd.DataFrame(
            {
                "eta_1": out["eta_1"].to_numpy(),
                "excess_air": out["excess_air"].to_numpy(),
                "heat_absorbed_w": out["heat_absorbed_w"].to_numpy(),
                "fuel_mass_flow_kg_per_s": out["fuel_mass_flow_kg_per_s"].to_numpy(),
                "steam_flow_kg_per_s": steam_flow,
                "flue_gas_o2": o2,
                "flue_gas_temperature_k": t_flue,
            }
        )
        return values, truth

    def _section_etas(self, design: TurbineDesign, flows: list[np.ndarray], t_s: np.ndarray):
        etas = []
        for k, flow in enumerate(flows):
            x = flow / (design.section_rated_t_per_h[k] * T_HOUR)
            eta = design.section_eta_full[k] - design.section_eta_drop[k] * (1 - x) ** 2
            etas.append(eta - self._fault_level("turbine_wear", design.slug, t_s, section=k + 1))
        return etas

    def _turbine_truth(self, design: TurbineDesign, out: pd.DataFrame, etas, m_in) -> pd.DataFrame:
        frame = pd.DataFrame(
            {f"section{k + 1}_isentropic_efficiency": np.asarray(eta) for k, eta in enumerate(etas)}
        )
        frame["generator_power_w"] = out["generator_power_w"].to_numpy()
        frame["inlet_flow_kg_per_s"] = m_in
        return frame

    def true_values(
        self, t_ms: np.ndarray
    ) -> tuple[dict[str, np.ndarray], dict[str, pd.DataFrame]]:
        """True value of every tag in SI, and the truth per unit, at ``t_ms``."""
        t_ms = np.asarray(t_ms, dtype=np.int64)
        t_s = self._t_s(t_ms)
        abs_s = t_ms / 1000.0
        site = site_conditions(t_ms, seed=self.seed, time_zone=self.time_zone)
        values: dict[str, np.ndarray] = {
            "SITE.amb.temp": site.ambient_temperature_k,
            "SITE.amb.rh": site.relative_humidity,
        }
        truth: dict[str, pd.DataFrame] = {}

        hp_flow = site.mp_demand_kg_per_s + site.condensing_flow_kg_per_s
        flows = {
            GB1.slug: GB1_SHARE * hp_flow,
            GB2.slug: (1.0 - GB1_SHARE) * hp_flow,
            BB3.slug: site.lp_demand_kg_per_s,
        }
        boiler_values = {}
        for stream, design in enumerate(BOILERS, start=10):
            v, truth[design.slug] = self._boiler(
                design, flows[design.slug], abs_s, t_s, site, stream
            )
            truth[design.slug].index = t_ms
            boiler_values[design.slug] = v
            values.update(v)

        # tg1: steam of both gas boilers, extraction to the MP header, condensing rest.
        g1, g2 = boiler_values[GB1.slug], boiler_values[GB2.slug]
        m_in = hp_flow
        p_in = 0.5 * (g1["GB1.steam.press"] + g2["GB2.steam.press"]) - TG1.inlet_bar_drop * 1e5
        t_in = (
            flows["gb1"] * g1["GB1.steam.temp"] + flows["gb2"] * g2["GB2.steam.temp"]
        ) / m_in - TG1.inlet_k_drop
        m_ext = site.mp_demand_kg_per_s
        p_ext = self._barg(MP_HEADER_BARG + 0.12 * wander(abs_s, self.seed, 20, (1.7 * 3600,)))
        # Condenser: cooling-tower water follows the weather; saturation about 13 K above it
        # at full flow (water rise plus terminal difference; our choice).
        t_cw_c = 0.55 * (site.ambient_temperature_k - 273.15) + 12.0
        m_cond = m_in - m_ext
        t_sat = t_cw_c + 9.0 + 4.0 * m_cond / (TG1.section_rated_t_per_h[1] * T_HOUR) + 273.15
        p_cond = steam.saturation_pressure(t_sat)
        etas1 = self._section_etas(TG1, [m_in, m_cond], t_s)
        out1 = turbine_forward(
            m_in,
            p_in,
            t_in,
            [p_ext],
            [m_ext],
            p_cond,
            etas1,
            generator_efficiency=self.parameters[TG1.slug]["generator_efficiency"],
        )
        values.update(
            {
                "TG1.steam.flow": m_in,
                "TG1.steam.press": p_in,
                "TG1.steam.temp": t_in,
                "TG1.ext.flow": m_ext,
                "TG1.ext.press": p_ext,
                "TG1.ext.temp": out1["port1_temperature_k"].to_numpy(),
                "TG1.cond.press": p_cond,
                "TG1.cond.temp": out1["exhaust_temperature_k"].to_numpy(),
                "TG1.gen.power": out1["generator_power_w"].to_numpy(),
            }
        )
        truth[TG1.slug] = self._turbine_truth(TG1, out1, etas1, m_in)
        truth[TG1.slug]["exhaust_quality"] = out1["exhaust_quality"].to_numpy()

        # tg2: all of the chip boiler's steam, exhausting to the LP header.
        b3 = boiler_values[BB3.slug]
        m2 = flows[BB3.slug]
        p2 = b3["BB3.steam.press"] - TG2.inlet_bar_drop * 1e5
        t2 = b3["BB3.steam.temp"] - TG2.inlet_k_drop
        p_lp = self._barg(LP_HEADER_BARG + 0.04 * wander(abs_s, self.seed, 21, (1.3 * 3600,)))
        etas2 = self._section_etas(TG2, [m2], t_s)
        out2 = turbine_forward(
            m2,
            p2,
            t2,
            [],
            [],
            p_lp,
            etas2,
            generator_efficiency=self.parameters[TG2.slug]["generator_efficiency"],
        )
        values.update(
            {
                "TG2.steam.press": p2,
                "TG2.steam.temp": t2,
                "TG2.exh.press": p_lp,
                "TG2.exh.temp": out2["exhaust_temperature_k"].to_numpy(),
                "TG2.gen.power": out2["generator_power_w"].to_numpy(),
            }
        )
        truth[TG2.slug] = self._turbine_truth(TG2, out2, etas2, m2)
        for frame in truth.values():
            frame.index = pd.Index(t_ms, name="t_ms")
        missing = set(self.tags) - set(values)
        if missing:  # the plant file and this model must describe the same instruments
            raise RuntimeError(f"the simulator has no model for tag(s) {sorted(missing)}")
        return values, truth

    # ------------------------------------------------------------------ instruments

    def _instrument(self, name: str, si_values: np.ndarray, t_ms: np.ndarray) -> np.ndarray:
        """Readings of one tag before stuck transmitters and gaps."""
        spec = self.tags[name]
        si_unit = measure.si_unit_for(spec.unit)
        values = np.asarray(
            measure.from_si(si_values, si_unit, spec.unit, self.atmosphere_pa), dtype=float
        )
        t_s = self._t_s(t_ms)
        for fault in self.faults:
            if fault.kind == "meter_bias" and fault.matches(name):
                values = values * (1.0 + fault.size * fault.active(t_s))
        if not self.noise:
            return values
        return spec.measure(values, t_ms, self.seed)

    def _stuck_value(self, index: int, fault: Fault, name: str) -> float:
        key = (index, name)
        if key not in self._stuck_values:
            t0 = np.array([self.start_ms + int(fault.start_s * 1000)], dtype=np.int64)
            si, _ = self.true_values(t0)
            self._stuck_values[key] = float(self._instrument(name, si[name], t0)[0])
        return self._stuck_values[key]

    def generate(self, t_ms: np.ndarray) -> Simulation:
        """Readings and truth at the instants ``t_ms`` (sorted UTC epoch ms)."""
        t_ms = np.asarray(t_ms, dtype=np.int64)
        si, truth = self.true_values(t_ms)
        t_s = self._t_s(t_ms)
        columns = {}
        for name in self.tags:
            readings = self._instrument(name, si[name], t_ms)
            for i, fault in enumerate(self.faults):
                if not fault.matches(name):
                    continue
                on = fault.active(t_s)
                if fault.kind == "stuck" and on.any():
                    readings = np.where(on, self._stuck_value(i, fault, name), readings)
                elif fault.kind == "gap":
                    readings = np.where(on, np.nan, readings)
            columns[name] = readings
        frame = pd.DataFrame(columns, index=pd.Index(t_ms, name="t_ms"))
        return Simulation(t_ms=t_ms, readings=frame, truth=truth)


def aligned_start(now_ms: int, days: float, interval_s: int) -> int:
    """The simulation start ``days`` before ``now_ms``, on the plant's interval grid."""
    step = interval_s * 1000
    end = (int(now_ms) // step) * step
    return end - int(round(days * DAY_S / interval_s)) * step
