"""Design data of the demo plant that a plant file does not hold.

The plant file (:data:`api.demo.PLANT_FILE`) says what is measured and how, which fuels
are burnt and the units' configured parameters (surface loss, rated heat output, carbon
in the ash, generator efficiency), and the simulator takes those from it. This module
says how the invented plant behaves: rated flows, steam conditions, how flue-gas oxygen
and temperature and the turbines' section efficiencies move with load. All numbers are invented for the demo, chosen to be typical of their kind of
equipment (common practice, from memory), and are not data of any real plant.
"""

from __future__ import annotations

from dataclasses import dataclass

T_HOUR = 1.0 / 3.6
"""One tonne per hour in kg/s. [kg/s per t/h]"""


@dataclass(frozen=True)
class BoilerDesign:
    """How one boiler behaves with load (load = steam flow / rated steam flow).

    Pressures are gauge [bar(g)], temperatures [degC], flows [t/h]; the simulator turns
    them into SI against the plant's atmosphere.
    """

    slug: str
    tag_prefix: str
    rated_steam_t_per_h: float
    steam_barg: float
    steam_degc_full: float
    steam_degc_drop_low_load: float
    """Fall of steam temperature at zero load, quadratic in (1 - load). [K]"""
    feedwater_barg: float
    feedwater_barg_drop_full: float
    feedwater_degc_low: float
    feedwater_degc_rise_full: float
    o2_full: float
    """Flue-gas O2 (dry, mole fraction) at full load. [-]"""
    o2_rise_low_load: float
    """Extra O2 at zero load, times (1 - load)^1.5. [-]"""
    flue_degc_low: float
    flue_degc_rise_full: float
    blowdown_fraction: float
    drum_bar_above_steam: float


@dataclass(frozen=True)
class TurbineDesign:
    """How one turbine-generator behaves with load."""

    slug: str
    tag_prefix: str
    rated_inlet_t_per_h: float
    section_eta_full: tuple[float, ...]
    """Isentropic efficiency of each section at full flow through it. [-]"""
    section_eta_drop: tuple[float, ...]
    """Fall of each section's efficiency at zero flow, times (1 - flow/rated)^2. [-]"""
    section_rated_t_per_h: tuple[float, ...]
    """Flow through each section at which its efficiency is highest. [t/h]"""
    inlet_bar_drop: float
    """Pressure drop from the boiler outlet to the turbine inlet. [bar]"""
    inlet_k_drop: float
    """Temperature drop from the boiler outlet to the turbine inlet. [K]"""


GB1 = BoilerDesign(
    slug="gb1",
    tag_prefix="GB1",
    rated_steam_t_per_h=32.0,
    steam_barg=63.0,
    steam_degc_full=485.0,
    steam_degc_drop_low_load=18.0,
    feedwater_barg=76.0,
    feedwater_barg_drop_full=5.0,
    feedwater_degc_low=138.0,
    feedwater_degc_rise_full=10.0,
    o2_full=0.028,
    o2_rise_low_load=0.022,
    flue_degc_low=112.0,
    flue_degc_rise_full=36.0,
    blowdown_fraction=0.015,
    drum_bar_above_steam=3.5,
)
GB2 = BoilerDesign(
    slug="gb2",
    tag_prefix="GB2",
    rated_steam_t_per_h=32.0,
    steam_barg=63.0,
    steam_degc_full=483.0,
    steam_degc_drop_low_load=20.0,
    feedwater_barg=76.0,
    feedwater_barg_drop_full=5.0,
    feedwater_degc_low=138.0,
    feedwater_degc_rise_full=10.0,
    o2_full=0.030,
    o2_rise_low_load=0.020,
    flue_degc_low=115.0,
    flue_degc_rise_full=38.0,
    blowdown_fraction=0.015,
    drum_bar_above_steam=3.5,
)
BB3 = BoilerDesign(
    slug="bb3",
    tag_prefix="BB3",
    rated_steam_t_per_h=36.0,
    steam_barg=42.0,
    steam_degc_full=430.0,
    steam_degc_drop_low_load=25.0,
    feedwater_barg=52.0,
    feedwater_barg_drop_full=3.0,
    feedwater_degc_low=126.0,
    feedwater_degc_rise_full=6.0,
    o2_full=0.055,
    o2_rise_low_load=0.030,
    flue_degc_low=140.0,
    flue_degc_rise_full=35.0,
    blowdown_fraction=0.0,
    drum_bar_above_steam=2.5,
)
BOILERS = (GB1, GB2, BB3)

TG1 = TurbineDesign(
    slug="tg1",
    tag_prefix="TG1",
    rated_inlet_t_per_h=55.0,
    section_eta_full=(0.80, 0.84),
    section_eta_drop=(0.10, 0.08),
    section_rated_t_per_h=(55.0, 35.0),
    inlet_bar_drop=1.5,
    inlet_k_drop=4.0,
)
TG2 = TurbineDesign(
    slug="tg2",
    tag_prefix="TG2",
    rated_inlet_t_per_h=36.0,
    section_eta_full=(0.76,),
    section_eta_drop=(0.10,),
    section_rated_t_per_h=(36.0,),
    inlet_bar_drop=1.0,
    inlet_k_drop=3.0,
)
TURBINES = (TG1, TG2)

MP_HEADER_BARG = 12.0
"""Medium-pressure process header, fed by tg1's extraction. [bar(g)]"""
LP_HEADER_BARG = 4.5
"""Low-pressure process header, fed by tg2's exhaust. [bar(g)]"""
