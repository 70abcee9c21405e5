"""Measurement uncertainty of every result: first-order propagation, defaults, judgement.

Three parts, one concept (the uncertainty a result inherits from its instruments):

* **Propagation** (:func:`propagate`): the law of propagation of uncertainty for
  uncorrelated inputs (Eq. 10 in [1]_) applied to *any* catalogue unit model, with the
  sensitivity coefficients found numerically on the vectorised model: one extra model
  evaluation per uncertain input, all rows at once. Every input's standard uncertainty is
  kept as its systematic and random parts (the split of [2]_), so that averaging over time
  (:func:`mean_over_intervals`) shrinks only the random part.
* **Instrument figures** (:class:`InstrumentSpec`, :data:`INSTRUMENT_DEFAULTS`,
  :func:`standard_uncertainty`, :func:`input_uncertainties`): a tag's stated accuracy
  (absolute, fraction of reading or of span; standard or expanded) turned into per-row
  standard uncertainties, with documented defaults per measurement kind.
* **Judgement** (:func:`consistency_flags`, :func:`drift_significant`): consistency flags
  and drift significance decided against the combined uncertainty, not a fixed tolerance.

Pseudo-inputs. Besides the role columns, two properties of the fuel specification in the
model context can carry an uncertainty, under the names :data:`FUEL_HEATING_VALUE` and
:data:`FUEL_DENSITY` (the heating value is usually among the largest terms of a boiler's
or a block's efficiency). They are perturbed by replacing the context's fuel.

References
----------
.. [1] JCGM 100:2008, "Evaluation of measurement data - Guide to the expression of
   uncertainty in measurement" (GUM 1995 with minor corrections): 5.1.2 and Eq. (10) (law
   of propagation of uncertainty, uncorrelated inputs), 5.1.3 (sensitivity coefficients,
   Eq. (11a); Note 2 allows them to be evaluated numerically from changes of the input),
   5.1.6 and Eq. (12) (products and quotients: relative uncertainties add in quadrature),
   5.2.2 and Eq. (16) (correlated inputs; fully correlated terms add linearly),
   6.2 and 6.3 (expanded uncertainty U = k u_c), G.6.6 (k = 2 gives about 95 % when the
   effective degrees of freedom are large).
.. [2] ASME PTC 19.1-2018, "Test Uncertainty": the systematic standard uncertainty b and
   the random standard uncertainty of the mean s_Xbar = s_X / sqrt(N) of a measurement,
   combined as u = sqrt(b^2 + s^2); propagation to a result by the Taylor-series method,
   b_R^2 = sum (theta_i b_i)^2 and s_R^2 = sum (theta_i s_i)^2 with absolute sensitivities
   theta_i = dR/dX_i (also determined numerically); expanded uncertainty U_95 = t_95 u_R,
   with t_95 = 2 under the large-sample assumption. Sections 4, 7 and 8 from memory;
   clause and equation numbers not checked against the text.
.. [3] JCGM 101:2008, "Propagation of distributions using a Monte Carlo method"
   (Supplement 1 to the GUM): the reference against which the first-order result is
   checked in the tests.
.. [4] IEC 60584-1:2013, "Thermocouples - Part 1: EMF specifications and tolerances",
   tolerance class 1 of type K and N thermocouples (+-1.5 K up to 375 degC, +-0.4 % of
   the Celsius temperature above). From memory.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from functools import cached_property
from typing import Literal

import numpy as np
import pandas as pd

from engine.catalogue import ModelContext, ModelFunction, Role, UnitKind
from engine.checks import Flag
from engine.fuels import FuelProperties

COVERAGE_FACTOR_95 = 2.0
"""Coverage factor for an expanded uncertainty at about 95 % coverage. [-]

The large-sample value of ASME PTC 19.1-2018 (t_95 = 2) and GUM G.6.6 (k = 2 when the
effective degrees of freedom are large). It is what lostwork uses, not a Student t with
Welch-Satterthwaite degrees of freedom: an interval mean averages tens of readings and
instrument figures come from calibrations with many points, so the effective degrees of
freedom exceed about 30, where t_95 lies between 1.96 and 2.04.
"""

STEP_FRACTION = 1e-2
"""Default forward-difference step as a fraction of the input's standard uncertainty. [-]

With ``h = 0.01 u`` the truncation error of the contribution ``c u`` is 0.5 % of the
second-order term ``u^2 f''/2`` that the first-order method neglects anyway (see
:func:`propagate`, Notes). For a 1 % input uncertainty the step is 1e-4 of the value:
about five orders above the residual noise of the IF97 inverse routes (about 1e-9
relative) and twelve above round-off. Measured on the boiler and turbine models:
sensitivities at steps from 1e-2 u to 1e-5 u agree to 1e-4 relative, the difference
shrinking in proportion to the step (truncation, not noise).
"""

FUEL_HEATING_VALUE = "fuel_heating_value"
"""Pseudo-input: the fuel specification's higher heating value. [J/kg]

Perturbing it scales the specification's HHV, LHV, composition-based chemical exergy and
CO2 factor together (the fuel's quality changes, its ratios do not), the same rule the
models apply to a measured ``fuel_hhv``. When the ``fuel_hhv`` role is bound the
specification's heating value is not used, so this pseudo-input has no effect and the
measured column carries the heating-value uncertainty instead.
"""

FUEL_DENSITY = "fuel_density"
"""Pseudo-input: the fuel's density at its metering reference conditions, which turns a
``fuel_volume_flow`` into a mass flow. [kg/m^3]"""

PSEUDO_INPUTS: tuple[str, ...] = (FUEL_HEATING_VALUE, FUEL_DENSITY)
"""Names of the context properties that may carry an uncertainty."""

ArrayLike = float | np.ndarray | pd.Series | Sequence[float]


# --- propagation ---------------------------------------------------------------------


@dataclass(frozen=True)
class InputUncertainty:
    """Standard uncertainty of one input, kept as its systematic and random parts.

    Attributes
    ----------
    systematic : float, ndarray or Series, default 0
        Systematic standard uncertainty ``b`` (calibration, installation, fixed errors):
        the same error in every interval. Scalar or one value per row; a Series is
        aligned on the inputs' index. [unit of the input]
    random : float, ndarray or Series, default 0
        Random standard uncertainty of the interval mean ``s_Xbar`` (scatter of the
        readings averaged into the interval, see :func:`random_uncertainty_of_mean`):
        independent from interval to interval. [unit of the input]

    Notes
    -----
    The standard uncertainty of the input is ``u = sqrt(b^2 + s^2)`` ([2]_ of the
    module). A stated expanded (95 %) figure must be halved first
    (:func:`standard_uncertainty` does it).
    """

    systematic: ArrayLike = 0.0
    random: ArrayLike = 0.0


@dataclass(frozen=True, eq=False)
class Propagation:
    """Result of :func:`propagate`: the model's output and everything its uncertainty needs.

    Attributes
    ----------
    results : DataFrame
        The model's output at the nominal inputs (result columns and ``flags``).
    result_columns : tuple of str
        The result columns propagated to: every result column that is finite in at
        least one row, in the model's order.
    input_names : tuple of str
        The inputs (role columns and pseudo-inputs) that carry an uncertainty, in the
        order of the first axis of the arrays below.
    sensitivity : ndarray, shape (inputs, results, rows)
        Sensitivity coefficients ``c_i = dR/dX_i`` per row (Eq. 11a in [1]_; PTC 19.1's
        absolute sensitivity theta_i). Zero where the input's uncertainty is zero.
        [result unit / input unit]
    systematic : ndarray, shape (inputs, rows)
        Systematic standard uncertainty of each input per row. [input unit]
    random : ndarray, shape (inputs, rows)
        Random standard uncertainty of each input per row. [input unit]
    nan_columns : tuple of str
        Result columns that are NaN in every row (results a configuration does not
        produce); not propagated, their uncertainty columns are NaN.
    """

    results: pd.DataFrame
    result_columns: tuple[str, ...]
    input_names: tuple[str, ...]
    sensitivity: np.ndarray
    systematic: np.ndarray
    random: np.ndarray
    nan_columns: tuple[str, ...] = ()

    @cached_property
    def _squared(self) -> tuple[np.ndarray, np.ndarray]:
        return self.systematic**2, self.random**2

    def _variances(self, sensitivity: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(systematic, random) variance per row of one result, from its sensitivities.

        ``sensitivity`` has shape (inputs, rows): one result at a time keeps the
        temporaries small.
        """
        b2, s2 = self._squared
        with np.errstate(invalid="ignore", over="ignore"):
            c2 = np.square(sensitivity)
            return np.einsum("ir,ir->r", c2, b2), np.einsum("ir,ir->r", c2, s2)

    def table(self, k: float = COVERAGE_FACTOR_95) -> pd.DataFrame:
        """Standard, random, systematic and expanded uncertainty of every result.

        Parameters
        ----------
        k : float, default 2
            Coverage factor of the expanded uncertainty (:data:`COVERAGE_FACTOR_95`). [-]

        Returns
        -------
        DataFrame
            Same index as the results; per result column ``r``: ``u_<r>`` (combined
            standard uncertainty), ``u_random_<r>``, ``u_systematic_<r>`` and
            ``u95_<r>`` (expanded, ``k u``), all in the unit of ``r``. NaN where the
            result is NaN or a sensitivity could not be evaluated.
        """
        position = {name: j for j, name in enumerate(self.result_columns)}
        finite = np.isfinite(_as_array(self.results, self.result_columns))
        every = [
            name for name in self.results.columns if name in position or name in self.nan_columns
        ]
        # Filled column by column in the layout pandas keeps a float block in, so the
        # frame is built without copying.
        out = np.empty((4 * len(every), len(self.results)))
        names: list[str] = []
        for slot, name in enumerate(every):
            u, u_rand, u_sys, u95 = out[4 * slot : 4 * slot + 4]
            names += [f"u_{name}", f"u_random_{name}", f"u_systematic_{name}", f"u95_{name}"]
            if name not in position:
                out[4 * slot : 4 * slot + 4] = np.nan
                continue
            var_sys, var_rand = self._variances(self.sensitivity[:, position[name], :])
            missing = ~finite[position[name]]
            np.sqrt(var_sys + var_rand, out=u)
            np.sqrt(var_rand, out=u_rand)
            np.sqrt(var_sys, out=u_sys)
            for column in (u, u_rand, u_sys):
                column[missing] = np.nan
            np.multiply(u, k, out=u95)
        return pd.DataFrame(out.T, columns=names, index=self.results.index, copy=False)

    def difference(self, first: str, second: str) -> pd.DataFrame:
        """Uncertainty of the difference of two results that share inputs.

        Parameters
        ----------
        first, second : str
            Result columns, for example ``"eta_1"`` and ``"eta_1_indirect"``.

        Returns
        -------
        DataFrame
            Columns ``u``, ``u_random``, ``u_systematic`` of ``first - second``, same
            index as the results. [unit of the results]

        Notes
        -----
        The sensitivity of the difference is the difference of the sensitivities, so an
        input both results depend on (the fuel heating value in a direct and an indirect
        boiler efficiency) is counted with its correlation: this is Eq. (10) of [1]_
        applied to ``first - second`` as one function of the inputs, which is Eq. (16)
        for the two results without having to state their correlation.
        """
        i = self.result_columns.index(first)
        j = self.result_columns.index(second)
        var_sys, var_rand = self._variances(self.sensitivity[:, i, :] - self.sensitivity[:, j, :])
        values = self.results[[first, second]].to_numpy(dtype=float, na_value=np.nan)
        missing = ~np.isfinite(values).all(axis=1)
        u_sys = np.where(missing, np.nan, np.sqrt(var_sys))
        u_rand = np.where(missing, np.nan, np.sqrt(var_rand))
        return pd.DataFrame(
            {"u": np.hypot(u_sys, u_rand), "u_random": u_rand, "u_systematic": u_sys},
            index=self.results.index,
        )

    def judged_flags(self, k: float = COVERAGE_FACTOR_95) -> np.ndarray:
        """:func:`consistency_flags` of these results, with correlated direct-indirect terms.

        Parameters
        ----------
        k : float, default 2
            Coverage factor. [-]

        Returns
        -------
        ndarray of int64
            The new ``flags`` column. [-]
        """
        u_diff = None
        if {"eta_1", "eta_1_indirect"} <= set(self.result_columns):
            u_diff = self.difference("eta_1", "eta_1_indirect")["u"]
        return consistency_flags(self.results, self.table(k), k=k, u_direct_minus_indirect=u_diff)


def _per_row(value: ArrayLike, index: pd.Index, what: str) -> np.ndarray:
    """A scalar, sequence, ndarray or Series as one float per row (Series aligned on index)."""
    n = len(index)
    if isinstance(value, pd.Series):
        arr = value.reindex(index).to_numpy(dtype=float, na_value=np.nan)
    else:
        arr = np.asarray(value, dtype=float)
        if arr.ndim == 0:
            arr = np.full(n, float(arr))
    if arr.shape != (n,):
        raise ValueError(
            f"uncertainty of {what!r} has shape {arr.shape}; expected a scalar or {n} rows"
        )
    with np.errstate(invalid="ignore"):
        if np.any(arr < 0):
            raise ValueError(f"uncertainty of {what!r} is negative in some rows")
    return arr


def _result_columns(model: UnitKind | ModelFunction, frame: pd.DataFrame) -> tuple[str, ...]:
    if isinstance(model, UnitKind):
        return tuple(column.name for column in model.results if column.name in frame.columns)
    return tuple(
        name
        for name in frame.columns
        if name != "flags" and pd.api.types.is_float_dtype(frame[name].dtype)
    )


def _perturbed_fuel(fuel: FuelProperties | None, name: str, step: float) -> FuelProperties:
    if fuel is None:
        raise ValueError(f"an uncertainty is given for {name!r} but the model context has no fuel")
    if name == FUEL_DENSITY:
        if fuel.density_kg_per_m3 is None:
            raise ValueError(
                f"an uncertainty is given for {name!r} but fuel {fuel.name!r} has no density"
            )
        return replace(fuel, density_kg_per_m3=fuel.density_kg_per_m3 + step)
    scale = 1.0 + step / fuel.hhv_j_per_kg
    changes: dict[str, float] = {"hhv_j_per_kg": fuel.hhv_j_per_kg * scale}
    fields = {f.name for f in dataclasses.fields(fuel)}
    # Every property that is proportional to the heating value moves with it.
    for field_name, power in (
        ("lhv_j_per_kg", 1.0),
        ("composition_exergy_j_per_kg", 1.0),
        ("co2_kg_per_j", -1.0),
    ):
        value = getattr(fuel, field_name, None) if field_name in fields else None
        if value is not None:
            changes[field_name] = value * scale**power
    return replace(fuel, **changes)


def _nominal_pseudo(context: ModelContext, name: str) -> float:
    fuel = context.fuel
    if fuel is None:
        raise ValueError(f"an uncertainty is given for {name!r} but the model context has no fuel")
    if name == FUEL_DENSITY:
        if fuel.density_kg_per_m3 is None:
            raise ValueError(
                f"an uncertainty is given for {name!r} but fuel {fuel.name!r} has no density"
            )
        return float(fuel.density_kg_per_m3)
    return float(fuel.hhv_j_per_kg)


def _subset_context(context: ModelContext, rows: np.ndarray) -> ModelContext:
    """The context for a subset of rows: per-row dead-state arrays are cut to match."""
    dead = context.dead
    cut = {
        f.name: np.asarray(getattr(dead, f.name))[rows]
        for f in dataclasses.fields(dead)
        if np.ndim(getattr(dead, f.name)) > 0
    }
    return replace(context, dead=replace(dead, **cut)) if cut else context


def _evaluate(
    model: ModelFunction,
    inputs: pd.DataFrame,
    params: Mapping[str, float],
    context: ModelContext,
    columns: Sequence[str],
) -> np.ndarray:
    """The result columns as one float array of shape (results, rows)."""
    return _as_array(model(inputs, params, context), columns)


_WHOLE_FRAME_ROWS = 20_000
"""Below this many rows a model's whole output is converted at once (pandas' fixed cost
of selecting columns dominates); above it only the result columns are (bytes dominate)."""


def _as_array(frame: pd.DataFrame, columns: Sequence[str]) -> np.ndarray:
    """Columns of a model's output as one C-contiguous float array, shape (columns, rows)."""
    names = frame.columns.tolist()
    if len(frame) < _WHOLE_FRAME_ROWS:
        try:
            positions = [names.index(name) for name in columns]
            # pandas hands a frame out column-major, so .T is row-per-column and the
            # gather below copies whole contiguous columns.
            return frame.to_numpy(dtype=float, na_value=np.nan).T[positions]
        except (TypeError, ValueError):  # a non-numeric column besides the results
            pass
    return np.ascontiguousarray(frame[list(columns)].to_numpy(dtype=float, na_value=np.nan).T)


def propagate(
    model: UnitKind | ModelFunction,
    inputs: pd.DataFrame,
    params: Mapping[str, float],
    context: ModelContext,
    uncertainties: Mapping[str, InputUncertainty],
    *,
    step_fraction: float = STEP_FRACTION,
) -> Propagation:
    """First-order propagation of input uncertainties through a unit model to every result.

    Parameters
    ----------
    model : UnitKind or model function
        A catalogue entry (its declared results are propagated) or any function with the
        catalogue's model signature (every float column but ``flags`` is propagated).
    inputs : DataFrame
        One row per interval, one column per bound role, SI units (as for the model).
    params : Mapping[str, float]
        The model's parameters (taken as exact).
    context : ModelContext
        Dead state and fuel (taken as exact, except for the pseudo-inputs).
    uncertainties : Mapping[str, InputUncertainty]
        Per input column (or pseudo-input :data:`FUEL_HEATING_VALUE`,
        :data:`FUEL_DENSITY`), its systematic and random standard uncertainty in the
        input's SI unit. Inputs not named are taken as exact. [unit of the input]
    step_fraction : float, default 0.01
        Forward-difference step as a fraction of each input's standard uncertainty
        (:data:`STEP_FRACTION`). [-]

    Returns
    -------
    Propagation
        Nominal results, sensitivities and input uncertainties; ``.table()`` gives the
        ``u_``, ``u_random_``, ``u_systematic_`` and ``u95_`` columns.

    Raises
    ------
    KeyError
        When an uncertainty names neither an input column nor a pseudo-input.
    ValueError
        For a negative uncertainty, an array of the wrong length, a non-positive step
        fraction, or a fuel pseudo-input without a fuel (or density) in the context.

    Notes
    -----
    Law of propagation for uncorrelated inputs (Eq. 10 in [1]_), kept per component as
    in [2]_, for every result ``R`` and row::

        c_i     = dR/dX_i
        b_R^2   = sum_i (c_i b_i)^2          (systematic)
        s_R^2   = sum_i (c_i s_i)^2          (random)
        u_R^2   = b_R^2 + s_R^2,   U_95 = k u_R,  k = 2

    Both components of an input share its sensitivity, so each uncertain input costs
    exactly one extra model evaluation, over all rows at once: the input's column is
    moved by ``h_i = step_fraction * u_i`` (per row) and ``c_i = (R(X + h_i) - R(X)) /
    h_i``. A pseudo-input is a scalar of the context, so its step is ``step_fraction``
    times its largest per-row uncertainty.

    Why forward differences with a step tied to the uncertainty: a central difference
    would cost two evaluations per input; the forward difference costs one and its
    truncation error is ``h f''/2``, so the error of the contribution ``c_i u_i`` is
    ``step_fraction/2 * u_i^2 f''`` -- ``step_fraction/2`` times the second-order term
    that the first-order method itself neglects (GUM 5.1.2, Note), i.e. 0.5 % of a term
    assumed negligible. Round-off and solver noise of relative size ``eta`` in ``R``
    add an error ``~2 eta |R| / (step_fraction u_i |c_i|)`` to the contribution; for
    the IF97 inverse routes (eta about 1e-9) and any contribution above 1e-4 of ``R``
    this stays below 2e-3 of the contribution. A step proportional to the value
    (``sqrt(eps) |x|``) would sit in that noise for the steam-property models.

    Rows where the forward step leaves the model's valid range (a finite nominal result
    becomes NaN) are evaluated again, those rows only, with a backward step; a row with
    NaN inputs or results has NaN uncertainty, and no row affects another. A row whose
    input uncertainty is zero has a zero contribution from that input. A result column
    that is NaN in every row (a result the configuration does not produce) is not
    propagated; its uncertainty columns are NaN.

    Not modelled: correlation between the systematic errors of *different* inputs
    (two thermometers calibrated against the same reference; PTC 19.1's correlated
    systematic terms, Eq. 16 in [1]_). Every input's error is taken as independent of
    the others'; correlated terms would add ``2 c_i c_k b_ik`` to ``b_R^2``.

    Examples
    --------
    >>> import pandas as pd
    >>> from engine.catalogue import ModelContext
    >>> from engine.deadstate import dead_state
    >>> def ratio(inputs, params, context):
    ...     return pd.DataFrame({"q": inputs["a"] / inputs["b"], "flags": 0})
    >>> prop = propagate(ratio, pd.DataFrame({"a": [2.0], "b": [4.0]}), {},
    ...     ModelContext(dead_state()), {"a": InputUncertainty(systematic=0.02),
    ...                                  "b": InputUncertainty(random=0.04)})
    >>> round(float(prop.table()["u_q"].iloc[0]), 6)  # 0.5 * sqrt(0.01^2 + 0.01^2)
    0.007071
    """
    if not step_fraction > 0:
        raise ValueError(f"step_fraction must be positive, got {step_fraction!r}")
    function: ModelFunction = model.model if isinstance(model, UnitKind) else model
    base = function(inputs, params, context)
    declared = _result_columns(model, base)
    values = _as_array(base, declared)
    # A column NaN in every row (a result this configuration does not produce) is not
    # propagated: it would only cost memory and time.
    produced = np.isfinite(values).any(axis=1)
    columns = [name for name, ok in zip(declared, produced, strict=True) if ok]
    nan_columns = [name for name, ok in zip(declared, produced, strict=True) if not ok]
    nominal = values[produced]  # (results, rows)
    nominal_ok = np.isfinite(nominal)
    m, n = nominal.shape

    names: list[str] = []
    for name in uncertainties:
        if name not in inputs.columns and name not in PSEUDO_INPUTS:
            known = ", ".join(map(str, inputs.columns))
            raise KeyError(
                f"uncertainty given for {name!r}, which is neither an input column "
                f"({known}) nor a pseudo-input ({', '.join(PSEUDO_INPUTS)})"
            )
        names.append(name)

    systematic = np.zeros((len(names), n))
    random = np.zeros((len(names), n))
    sensitivity = np.zeros((len(names), m, n))
    for i, name in enumerate(names):
        spec = uncertainties[name]
        systematic[i] = _per_row(spec.systematic, inputs.index, name)
        random[i] = _per_row(spec.random, inputs.index, name)
        u = np.hypot(systematic[i], random[i])
        with np.errstate(invalid="ignore"):
            uncertain = u > 0
        if not uncertain.any():
            continue  # exact input: no evaluation needed
        if name in PSEUDO_INPUTS:
            _nominal_pseudo(context, name)  # raises for a missing fuel or density
            step = step_fraction * float(np.nanmax(u))
            fuel = _perturbed_fuel(context.fuel, name, step)
            shifted = _evaluate(function, inputs, params, replace(context, fuel=fuel), columns)
            h = np.full(n, step)
            lost = np.zeros(n, dtype=bool)
        else:
            h = np.where(uncertain, step_fraction * u, 0.0)
            x = inputs[name].to_numpy(dtype=float, na_value=np.nan)
            shifted = _evaluate(function, inputs.assign(**{name: x + h}), params, context, columns)
            lost = uncertain & (nominal_ok & ~np.isfinite(shifted)).any(axis=0)
        # 1/h where uncertain; 0 where exact (no contribution); NaN where u is unknown.
        with np.errstate(divide="ignore"):
            inverse = np.where(uncertain, 1.0 / h, np.where(np.isnan(u), np.nan, 0.0))
        np.subtract(shifted, nominal, out=sensitivity[i])
        sensitivity[i] *= inverse
        if lost.any():
            # The forward step left the model's valid range: step backward, those rows only.
            rows = np.flatnonzero(lost)
            back = inputs.iloc[rows].assign(**{name: x[rows] - h[rows]})
            behind = _evaluate(function, back, params, _subset_context(context, rows), columns)
            sensitivity[i][:, rows] = (nominal[:, rows] - behind) / h[rows]
    return Propagation(
        results=base,
        result_columns=tuple(columns),
        input_names=tuple(names),
        sensitivity=sensitivity,
        systematic=systematic,
        random=random,
        nan_columns=tuple(nan_columns),
    )


def top_contributors(
    propagation: Propagation, *, row=None, limit: int | None = None
) -> dict[str, pd.Series]:
    """Inputs ranked by their share of each result's variance: which instrument to fix first.

    Parameters
    ----------
    propagation : Propagation
        From :func:`propagate`.
    row : index label, optional
        One row of the results (a label of their index). When omitted the shares are of
        the variance summed over all rows with a finite uncertainty (the share of the
        mean variance over the period).
    limit : int, optional
        Keep only the first ``limit`` inputs of each ranking.

    Returns
    -------
    dict of str to Series
        Per result column, a Series indexed by input name, values the share of the
        result's variance ``(c_i b_i)^2 + (c_i s_i)^2`` over ``u_R^2``, sorted from the
        largest; the shares of a full ranking sum to 1. A result without variance (or
        NaN at the row) has NaN shares. [-]
    """
    variance = propagation.systematic**2 + propagation.random**2  # (inputs, rows)
    with np.errstate(invalid="ignore", over="ignore"):
        if row is not None:
            position = propagation.results.index.get_loc(row)
            per_input = propagation.sensitivity[:, :, position] ** 2 * variance[:, None, position]
        else:
            terms = propagation.sensitivity**2 * variance[:, None, :]  # (inputs, results, rows)
            usable = np.isfinite(terms).all(axis=0)
            per_input = np.where(usable[None], terms, 0.0).sum(axis=2)
    total = per_input.sum(axis=0)
    ranking: dict[str, pd.Series] = {}
    for j, name in enumerate(propagation.result_columns):
        with np.errstate(invalid="ignore", divide="ignore"):
            share = per_input[:, j] / total[j] if total[j] > 0 else np.full(len(per_input), np.nan)
        series = pd.Series(share, index=list(propagation.input_names), name=name)
        series = series.sort_values(ascending=False, kind="stable")
        ranking[name] = series.iloc[:limit] if limit is not None else series
    return ranking


# --- averaging over time -------------------------------------------------------------


@dataclass(frozen=True)
class MeanUncertainty:
    """Uncertainty of the mean of a result over several intervals.

    Attributes
    ----------
    u_random : float or Series
        Random part, ``sqrt(sum s_i^2) / n``. [unit of the result]
    u_systematic : float or Series
        Systematic part, ``sum b_i / n``. [unit of the result]
    u : float or Series
        Combined standard uncertainty of the mean. [unit of the result]
    n : int or Series
        Number of intervals with a finite uncertainty. [-]
    """

    u_random: float | pd.Series
    u_systematic: float | pd.Series
    u: float | pd.Series
    n: int | pd.Series


def mean_over_intervals(u_random, u_systematic) -> MeanUncertainty:
    """Combine per-interval uncertainties into the uncertainty of the mean over the intervals.

    Parameters
    ----------
    u_random : array_like, Series or DataFrame
        Random standard uncertainty of the result in each interval (rows). A DataFrame
        gives one answer per column. [unit of the result]
    u_systematic : same shape as ``u_random``
        Systematic standard uncertainty of the result in each interval. [unit of the
        result]

    Returns
    -------
    MeanUncertainty
        Floats for 1-D input, Series (by column) for a DataFrame or 2-D array.

    Notes
    -----
    The mean of ``n`` interval results is a linear function of them with coefficients
    ``1/n``. Random errors are independent from interval to interval, so their
    variances add (Eq. 10 in [1]_): ``s = sqrt(sum s_i^2) / n``, i.e. ``s_i / sqrt(n)``
    for equal ``s_i``. Systematic errors come from the same instruments in every
    interval and are fully correlated (r = 1 in Eq. 16 in [1]_), so they add linearly:
    ``b = sum b_i / n``, i.e. ``b_i`` for equal ``b_i`` -- averaging does not shrink it.
    This is the treatment of [2]_. Intervals with a NaN uncertainty (NaN results) are
    left out, as a mean of the results would leave them out. Interval means taken from
    autocorrelated historian data are not fully independent; then the random part
    shrinks more slowly than ``1/sqrt(n)`` and this formula is optimistic.
    """
    rand = np.asarray(u_random, dtype=float)
    sys_ = np.asarray(u_systematic, dtype=float)
    if rand.shape != sys_.shape:
        raise ValueError(f"u_random has shape {rand.shape} but u_systematic {sys_.shape}")
    ok = np.isfinite(rand) & np.isfinite(sys_)
    n = ok.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        u_r = np.sqrt(np.where(ok, rand**2, 0.0).sum(axis=0)) / n
        u_s = np.where(ok, sys_, 0.0).sum(axis=0) / n
    u = np.hypot(u_r, u_s)
    if rand.ndim == 1:
        return MeanUncertainty(float(u_r), float(u_s), float(u), int(n))
    columns = u_random.columns if isinstance(u_random, pd.DataFrame) else None
    return MeanUncertainty(
        pd.Series(u_r, index=columns),
        pd.Series(u_s, index=columns),
        pd.Series(u, index=columns),
        pd.Series(n, index=columns),
    )


def random_uncertainty_of_mean(std, count):
    """Random standard uncertainty of an interval mean from the scatter of its readings.

    Parameters
    ----------
    std : numeric
        Sample standard deviation ``s_X`` of the readings averaged into the interval.
        [unit of the reading]
    count : numeric
        Number of readings ``N`` averaged. [-]

    Returns
    -------
    numeric
        ``s_X / sqrt(N)`` ([2]_), same type as ``std``; NaN where ``N < 2`` (no
        scatter can be estimated from one reading). [unit of the reading]

    Notes
    -----
    Historian readings a second apart are autocorrelated, so ``N`` overstates the number
    of independent readings and the result is a lower bound of the random uncertainty.
    """
    if isinstance(std, list | tuple):
        std = np.asarray(std, dtype=float)
    n = np.asarray(count, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        return std / np.sqrt(np.where(n >= 2, n, np.nan))


def expanded(u, k: float = COVERAGE_FACTOR_95):
    """Expanded uncertainty ``U = k u`` (GUM 6.2; PTC 19.1 ``U_95 = 2 u`` for large samples).

    Parameters
    ----------
    u : numeric
        Combined standard uncertainty. [unit of the result]
    k : float, default 2
        Coverage factor, :data:`COVERAGE_FACTOR_95`. [-]

    Returns
    -------
    numeric
        Same type as ``u``. [unit of the result]
    """
    if isinstance(u, list | tuple):
        u = np.asarray(u, dtype=float)
    return k * u


# --- instrument figures --------------------------------------------------------------

Basis = Literal["absolute", "reading", "span"]
Coverage = Literal["standard", "expanded95"]
Component = Literal["systematic", "random"]


@dataclass(frozen=True)
class InstrumentSpec:
    """A stated instrument uncertainty, as a tag's datasheet or calibration gives it.

    Attributes
    ----------
    value : float
        The figure: an amount in the tag's SI unit (``basis="absolute"``) or a fraction
        (``0.005`` for 0.5 %) of the reading or of the span. [SI unit or -]
    basis : {"absolute", "reading", "span"}, default "absolute"
        What ``value`` is relative to.
    coverage : {"standard", "expanded95"}, default "standard"
        Whether ``value`` is a standard uncertainty or an expanded one at about 95 %
        coverage; an expanded figure is divided by :data:`COVERAGE_FACTOR_95` = 2.
    span : float, optional
        Calibrated span (upper minus lower range value) in the tag's SI unit; required
        for ``basis="span"``. [SI unit of the tag]
    component : {"systematic", "random"}, default "systematic"
        Which part of the input's uncertainty the figure is. An accuracy statement is
        systematic: the same in every interval.
    note : str
        Where the figure comes from.

    Raises
    ------
    ValueError
        For a negative or non-finite value, an unknown basis, coverage or component, or a
        span basis without a positive span.
    """

    value: float
    basis: Basis = "absolute"
    coverage: Coverage = "standard"
    span: float | None = None
    component: Component = "systematic"
    note: str = ""

    def __post_init__(self) -> None:
        if not (np.isfinite(self.value) and self.value >= 0):
            raise ValueError(f"an uncertainty must be a finite number >= 0, got {self.value!r}")
        if self.basis not in ("absolute", "reading", "span"):
            raise ValueError(f"basis must be 'absolute', 'reading' or 'span', got {self.basis!r}")
        if self.coverage not in ("standard", "expanded95"):
            raise ValueError(f"coverage must be 'standard' or 'expanded95', got {self.coverage!r}")
        if self.component not in ("systematic", "random"):
            raise ValueError(f"component must be 'systematic' or 'random', got {self.component!r}")
        if self.basis == "span" and not (self.span is not None and self.span > 0):
            raise ValueError(
                f"a percent-of-span uncertainty needs a positive span, got {self.span!r}"
            )


INSTRUMENT_DEFAULTS: Mapping[str, InstrumentSpec] = {
    "pressure": InstrumentSpec(
        0.005,
        "reading",
        "expanded95",
        note=(
            "common practice: installed plant-grade pressure transmitter read in the upper "
            "half of its span (reference accuracy about 0.1 % of span, plus ambient, static "
            "and drift effects); configure a span-based figure for vacuum and low readings"
        ),
    ),
    "temperature": InstrumentSpec(
        2.0,
        "absolute",
        "expanded95",
        note=(
            "common practice: thermocouple with transmitter in a thermowell; IEC 60584-1 "
            "class 1 allows +-1.5 K to 375 degC and +-0.4 % of the Celsius reading above "
            "(from memory), about 2 K at main-steam temperatures"
        ),
    ),
    "mass_flow": InstrumentSpec(
        0.02,
        "reading",
        "expanded95",
        note=(
            "common practice: differential-pressure meter (orifice or nozzle) on feedwater or "
            "steam, about 1 % standard including installation effects; the figure behind the "
            "boiler's 2 % mass-balance tolerance"
        ),
    ),
    "volume_flow": InstrumentSpec(
        0.01,
        "reading",
        "expanded95",
        note=(
            "common practice: turbine or ultrasonic fuel-gas meter of fiscal grade, about "
            "1 % at 95 % including the conversion to reference conditions"
        ),
    ),
    "power": InstrumentSpec(
        0.005,
        "reading",
        "expanded95",
        note=(
            "common practice: revenue-class power metering with instrument transformers of "
            "accuracy class 0.2 to 0.5"
        ),
    ),
    "heating_value": InstrumentSpec(
        0.01,
        "reading",
        "expanded95",
        note=(
            "common practice: natural gas by on-line chromatograph or calorimeter; solid "
            "fuels analysed from grab samples are nearer 2-3 % and should configure it"
        ),
    ),
    "o2": InstrumentSpec(
        0.003,
        "absolute",
        "expanded95",
        note=(
            "common practice: zirconia flue-gas oxygen probe, about 0.2 percentage points, "
            "plus stratification across the duct; as a mole fraction [-]"
        ),
    ),
}
"""Default instrument uncertainty per measurement kind, used where a tag states none.

Every figure is marked "common practice" with its reason; all are expanded (95 %) and
systematic. The random part is not defaulted: it comes from the scatter of the readings
in each interval (:func:`random_uncertainty_of_mean`).
"""

_KIND_BY_UNIT = {
    "Pa": "pressure",
    "K": "temperature",
    "kg/s": "mass_flow",
    "m^3/s": "volume_flow",
    "W": "power",
    "J/kg": "heating_value",
}


def measurement_kind(role: Role | str, unit: str | None = None) -> str | None:
    """The measurement kind of :data:`INSTRUMENT_DEFAULTS` a role belongs to.

    Parameters
    ----------
    role : Role or str
        A catalogue role, or a role or pseudo-input name together with ``unit``.
    unit : str, optional
        The role's SI unit when ``role`` is a name.

    Returns
    -------
    str or None
        ``"pressure"``, ``"temperature"``, ``"mass_flow"``, ``"volume_flow"``,
        ``"power"``, ``"heating_value"``, ``"o2"``, or None when no default applies.
    """
    name, si_unit = (role.name, role.unit) if isinstance(role, Role) else (role, unit)
    if name == FUEL_HEATING_VALUE:
        return "heating_value"
    if name == FUEL_DENSITY:
        return None
    if si_unit in _KIND_BY_UNIT:
        return _KIND_BY_UNIT[si_unit]
    lowered = name.lower()
    if si_unit in ("1", "", None) and ("o2" in lowered or "oxygen" in lowered):
        return "o2"
    return None


def standard_uncertainty(spec: InstrumentSpec, readings):
    """Per-row standard uncertainty of a tag from its stated figure.

    Parameters
    ----------
    spec : InstrumentSpec
        The stated figure.
    readings : numeric
        The tag's readings (interval means) in its SI unit. [SI unit of the tag]

    Returns
    -------
    numeric
        Standard uncertainty per reading, same type as ``readings`` (a Series keeps its
        index); NaN where the reading is NaN. [SI unit of the tag]

    Notes
    -----
    ``value``, ``value |reading|`` or ``value span`` by basis, divided by 2 when the
    figure is expanded at 95 % (:data:`COVERAGE_FACTOR_95`, GUM 6.2 and G.6.6, large
    samples in [2]_). A datasheet bound of a rectangular distribution (``+-a`` with no
    stated coverage) has the standard uncertainty ``a / sqrt(3)`` (GUM 4.3.7); state it
    as ``coverage="standard"`` with that value.
    """
    if isinstance(readings, list | tuple):
        readings = np.asarray(readings, dtype=float)
    x = readings.astype(float) if isinstance(readings, pd.Series) else np.asarray(readings, float)
    divisor = COVERAGE_FACTOR_95 if spec.coverage == "expanded95" else 1.0
    if spec.basis == "reading":
        u = spec.value * np.abs(x) / divisor
    else:
        amount = spec.value if spec.basis == "absolute" else spec.value * float(spec.span)
        u = x * 0.0 + amount / divisor  # NaN reading -> NaN, same type and index
    if np.ndim(readings) == 0 and not isinstance(readings, pd.Series):
        return float(u)
    return u


def input_uncertainties(
    inputs: pd.DataFrame,
    specs: Mapping[str, InstrumentSpec | Sequence[InstrumentSpec]],
    *,
    kind: UnitKind | None = None,
    random: Mapping[str, ArrayLike] | pd.DataFrame | None = None,
    fuel: FuelProperties | None = None,
    use_defaults: bool = True,
) -> dict[str, InputUncertainty]:
    """Per-role systematic and random standard uncertainties for :func:`propagate`.

    Parameters
    ----------
    inputs : DataFrame
        The model's input columns (interval means, SI units).
    specs : Mapping[str, InstrumentSpec or sequence of them]
        Stated figures per input column or pseudo-input; several figures of the same
        component (e.g. a percent of reading and a percent of span) add in quadrature as
        independent effects (GUM 5.1.2).
    kind : UnitKind, optional
        The unit kind, to find each role's unit and so its default measurement kind.
    random : Mapping or DataFrame, optional
        Random standard uncertainty of each column's interval mean, e.g. from
        :func:`random_uncertainty_of_mean`; added in quadrature to random figures.
        [unit of the input]
    fuel : FuelProperties, optional
        The context's fuel: gives the nominal value of the pseudo-inputs, and with
        ``use_defaults`` adds :data:`FUEL_HEATING_VALUE` with the heating-value default
        when no ``fuel_hhv`` column is bound.
    use_defaults : bool, default True
        Use :data:`INSTRUMENT_DEFAULTS` for columns without a stated figure (needs
        ``kind`` for role units; a column of no known measurement kind stays exact).

    Returns
    -------
    dict of str to InputUncertainty
        Only the inputs with some uncertainty.
    """
    names = list(inputs.columns)
    if fuel is not None:
        names += [name for name in PSEUDO_INPUTS if name in specs]
        if use_defaults and FUEL_HEATING_VALUE not in names and "fuel_hhv" not in inputs.columns:
            names.append(FUEL_HEATING_VALUE)
    out: dict[str, InputUncertainty] = {}
    for name in names:
        if name in PSEUDO_INPUTS:
            assert fuel is not None
            if name == FUEL_DENSITY and fuel.density_kg_per_m3 is None:
                continue
            value = fuel.density_kg_per_m3 if name == FUEL_DENSITY else fuel.hhv_j_per_kg
            readings: ArrayLike = np.full(len(inputs), float(value))
            unit = "kg/m^3" if name == FUEL_DENSITY else "J/kg"
        else:
            readings = inputs[name].to_numpy(dtype=float, na_value=np.nan)
            role = kind.role(name) if kind is not None else None
            unit = role.unit if role is not None else None
        given = specs.get(name)
        if given is None:
            default_kind = measurement_kind(name, unit) if use_defaults else None
            given = INSTRUMENT_DEFAULTS[default_kind] if default_kind else ()
        figures = (given,) if isinstance(given, InstrumentSpec) else tuple(given)
        parts = {"systematic": np.zeros(len(inputs)), "random": np.zeros(len(inputs))}
        for spec in figures:
            parts[spec.component] = np.hypot(
                parts[spec.component], standard_uncertainty(spec, readings)
            )
        if random is not None and name in random:
            parts["random"] = np.hypot(parts["random"], _per_row(random[name], inputs.index, name))
        if any(np.any(p != 0) for p in parts.values()):
            out[name] = InputUncertainty(systematic=parts["systematic"], random=parts["random"])
    return out


# --- judgement -----------------------------------------------------------------------


def _values(frame: pd.DataFrame, name: str) -> np.ndarray:
    return frame[name].to_numpy(dtype=float, na_value=np.nan)


def _isentropic_columns(results: pd.DataFrame) -> list[str]:
    return [name for name in results.columns if name.endswith("isentropic_efficiency")]


def consistency_flags(
    results: pd.DataFrame,
    uncertainty: pd.DataFrame,
    *,
    k: float = COVERAGE_FACTOR_95,
    u_direct_minus_indirect=None,
) -> np.ndarray:
    """Consistency flags decided against the combined uncertainty instead of a fixed tolerance.

    Parameters
    ----------
    results : DataFrame
        A model's output, with its ``flags`` column.
    uncertainty : DataFrame
        ``u_<r>`` columns for the results, same index (``Propagation.table()``).
    k : float, default 2
        Coverage factor: a violation must exceed ``k`` standard uncertainties. [-]
    u_direct_minus_indirect : numeric, optional
        Standard uncertainty of ``eta_1 - eta_1_indirect`` with their shared inputs
        correlated (``Propagation.difference``). When omitted, ``u_eta_1`` and
        ``u_eta_1_indirect`` are combined in quadrature as if independent. [-]

    Returns
    -------
    ndarray of int64
        The new ``flags`` column. [-]

    Notes
    -----
    Judged bits and their rules (a result is inconsistent only when the violation
    exceeds its expanded uncertainty)::

        NEGATIVE_ENTROPY_GENERATION  sgen_w_per_k < -k u_sgen_w_per_k
        EFFICIENCY_ABOVE_ONE         eta_1 - 1 > k u_eta_1                    (HHV basis)
        ISENTROPIC_ABOVE_ONE         any *isentropic_efficiency: eta_s - 1 > k u_eta_s
        DIRECT_INDIRECT_DISAGREE     |eta_1 - eta_1_indirect| > k u_(eta_1 - eta_1_indirect)

    A bit is judged only where its columns exist and their uncertainty is finite; there
    the model's tolerance-based bit is replaced, elsewhere it is kept as the model set
    it. Other bits (INPUT_OUT_OF_RANGE, ABOVE_CARNOT, ENERGY_BALANCE_OPEN) are kept:
    ABOVE_CARNOT can be set by conditions that are not result columns. The pipeline calls
    this after :func:`propagate` (``Propagation.judged_flags`` does both steps).
    """
    n = len(results)
    flags = (
        results["flags"].to_numpy(dtype=np.int64)
        if "flags" in results.columns
        else np.zeros(n, dtype=np.int64)
    )
    flags = flags.copy()

    def apply(bit: Flag, judged: np.ndarray, violated: np.ndarray) -> None:
        nonlocal flags
        flags = np.where(judged, (flags & ~np.int64(bit)) | np.where(violated, bit, 0), flags)

    def has(name: str) -> bool:
        return name in results.columns and f"u_{name}" in uncertainty.columns

    with np.errstate(invalid="ignore"):
        if has("sgen_w_per_k"):
            sgen, u = _values(results, "sgen_w_per_k"), _values(uncertainty, "u_sgen_w_per_k")
            apply(Flag.NEGATIVE_ENTROPY_GENERATION, np.isfinite(u), sgen < -k * u)
        if has("eta_1"):
            eta, u = _values(results, "eta_1"), _values(uncertainty, "u_eta_1")
            apply(Flag.EFFICIENCY_ABOVE_ONE, np.isfinite(u), eta - 1.0 > k * u)
        isentropic = [name for name in _isentropic_columns(results) if has(name)]
        if isentropic:
            judged = np.ones(n, dtype=bool)
            violated = np.zeros(n, dtype=bool)
            for name in isentropic:
                eta, u = _values(results, name), _values(uncertainty, f"u_{name}")
                # A NaN efficiency (a section the turbine does not have) cannot violate.
                judged &= np.isfinite(u) | ~np.isfinite(eta)
                violated |= eta - 1.0 > k * u
            apply(Flag.ISENTROPIC_ABOVE_ONE, judged, violated)
        if "eta_1" in results.columns and "eta_1_indirect" in results.columns:
            if u_direct_minus_indirect is not None:
                u = np.asarray(u_direct_minus_indirect, dtype=float).reshape(-1)
            elif has("eta_1") and has("eta_1_indirect"):
                u = np.hypot(
                    _values(uncertainty, "u_eta_1"), _values(uncertainty, "u_eta_1_indirect")
                )
            else:
                u = np.full(n, np.nan)
            gap = _values(results, "eta_1") - _values(results, "eta_1_indirect")
            apply(Flag.DIRECT_INDIRECT_DISAGREE, np.isfinite(u), np.abs(gap) > k * u)
    return flags


def drift_significant(actual, u_actual, expected, u_expected, k: float = COVERAGE_FACTOR_95):
    """Whether a drift from the expected value exceeds the combined uncertainty.

    Parameters
    ----------
    actual : numeric
        Measured result (e.g. ``eta_1``). [unit of the result]
    u_actual : numeric
        Its standard uncertainty. [unit of the result]
    expected : numeric
        Baseline (expected) value. [unit of the result]
    u_expected : numeric
        Standard uncertainty of the expected value (e.g. the baseline's prediction
        standard error). [unit of the result]
    k : float, default 2
        Coverage factor. [-]

    Returns
    -------
    bool, ndarray of bool or Series of bool
        ``|actual - expected| > k sqrt(u_actual^2 + u_expected^2)``; False where any
        input is NaN. Same type as ``actual`` (a Series keeps its index).

    Notes
    -----
    The two uncertainties are combined as independent (Eq. 10 in [1]_). When the
    baseline was fitted on data from the same instruments, their systematic errors are
    common to actual and expected and cancel in the difference (Eq. 16 with r = 1):
    pass the random part of ``u_actual`` (``u_random_<r>``) in that case, otherwise the
    test is too cautious by the systematic part.
    """
    a, ua, e, ue = (np.asarray(v, dtype=float) for v in (actual, u_actual, expected, u_expected))
    with np.errstate(invalid="ignore"):
        out = np.abs(a - e) > k * np.hypot(ua, ue)
    if isinstance(actual, pd.Series):
        return pd.Series(out, index=actual.index, name=actual.name)
    if np.ndim(out) == 0:
        return bool(out)
    return out
