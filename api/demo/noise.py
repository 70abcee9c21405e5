"""Measurement noise of the simulated instruments, from the plant file's uncertainties.

A tag's stated standard uncertainty covers calibration (systematic) and scatter
(random). In the simulated plant every instrument is calibrated, so only the random part
shows, as independent Gaussian noise on each sample with a standard deviation of
:data:`NOISE_SHARE` times the stated uncertainty. Readings are then rounded to a
resolution well below that noise, as a historian stores them.
"""

from __future__ import annotations

import math
import zlib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from api.demo.profiles import normal
from api.plants.fileformat import PlantFile, load_yaml

NOISE_SHARE = 0.25
"""Sample-to-sample noise as a share of a tag's stated standard uncertainty. [-]

Our choice: the repeatability of plant transmitters is typically a quarter or less of
their stated accuracy (common practice, from memory). It also keeps the clean period
free of consistency flags: two 1 % flow meters then disagree by 0.35 % (one standard
deviation), well inside the boiler model's 2 % mass-balance tolerance.
"""

RESOLUTION_STEPS = 4.0
"""Readings are rounded to a power of ten at most 1/4 of the typical noise: the rounding
error (uniform, standard deviation resolution / sqrt(12)) adds under 0.6 % to it."""


@dataclass(frozen=True)
class TagSpec:
    """What the simulator needs to know about one tag (values in the tag's own unit).

    Attributes
    ----------
    name : str
        Tag name.
    unit : str
        Unit of measure the readings are sent in.
    low, high : float or None
        Plausible bounds; readings are kept inside them. [unit]
    absolute : float or None
        Stated standard uncertainty in ``unit``. [unit]
    relative : float or None
        Stated standard uncertainty as a fraction of the reading. [-]
    """

    name: str
    unit: str
    low: float | None
    high: float | None
    absolute: float | None
    relative: float | None

    @property
    def stream(self) -> int:
        """Noise stream of this tag: fixed by its name, so other tags do not move it."""
        return zlib.crc32(self.name.encode("utf-8"))

    def noise_sigma(self, values: np.ndarray) -> np.ndarray:
        """Standard deviation of the sample noise at ``values``. [unit]"""
        values = np.asarray(values, dtype=float)
        if self.relative is not None:
            return NOISE_SHARE * self.relative * np.abs(values)
        return np.full(values.shape, NOISE_SHARE * (self.absolute or 0.0))

    def resolution(self) -> float:
        """Rounding step of the readings. [unit]"""
        if self.relative is not None:
            typical = max(abs(self.low or 0.0), abs(self.high or 1.0)) / 4.0
            sigma = NOISE_SHARE * self.relative * typical
        else:
            sigma = NOISE_SHARE * (self.absolute or 0.0)
        if not sigma > 0:
            return 1e-3
        return 10.0 ** math.floor(math.log10(sigma / RESOLUTION_STEPS))

    def measure(self, true_values: np.ndarray, t_ms: np.ndarray, seed: int) -> np.ndarray:
        """Readings of this instrument at ``t_ms`` for the true values (in ``unit``).

        Noise is drawn per (seed, tag, second), so a reading does not depend on the batch
        it is generated in. NaN stays NaN; readings are rounded and kept within bounds.
        """
        true_values = np.asarray(true_values, dtype=float)
        seconds = np.asarray(t_ms, dtype=np.int64) // 1000
        noisy = true_values + self.noise_sigma(true_values) * normal(seed, self.stream, seconds)
        step = self.resolution()
        rounded = np.round(noisy / step) * step
        return np.clip(
            rounded,
            -np.inf if self.low is None else self.low,
            np.inf if self.high is None else self.high,
        )


def tag_specs(plant_file: Path) -> dict[str, TagSpec]:
    """The tags of a plant file, by name."""
    document = PlantFile.model_validate(load_yaml(plant_file.read_text(encoding="utf-8")))
    specs = {}
    for name, tag in document.tags.items():
        relative = tag.relative_uncertainty()
        absolute = None
        if relative is None and isinstance(tag.uncertainty, int | float):
            absolute = float(tag.uncertainty)
        elif relative is None and tag.uncertainty is not None:
            raise ValueError(
                f"tag {name!r}: the simulator reads an uncertainty given as a number in the "
                f"tag's unit or as '<n>% of reading', not {tag.uncertainty!r}"
            )
        specs[name] = TagSpec(
            name=name,
            unit=tag.unit,
            low=tag.low,
            high=tag.high,
            absolute=absolute,
            relative=relative,
        )
    return specs
