"""Uncertainty of the no-load loss, load loss, total losses, impedance and no-load current.

GUM (JCGM 100:2008) law of propagation for uncorrelated inputs, eq. (10): ``u_c^2 = sum (c_i u_i)^2``,
expanded ``U = k u_c`` with k = 2 (about 95 % for a near-normal output, GUM 6.3.3).

The measurement model is the evaluation itself: every input (each reading, each error of the
chain, each resistance and temperature) is a float, the corrections and the evaluation's own pure
functions (waveform correction, scaling to rated current, temperature correction, three-phase
means and sums) map them to the results, and the sensitivity coefficients ``c_i`` are central
differences of that map. So the propagated model is exactly the one that produced the results.

Inputs:
- type A (GUM 4.2): each averaged reading, ``u = s / sqrt(n)`` from the raw samples' standard
  deviation ``s`` and count ``n`` (consecutive samples are treated as independent);
- type B (GUM 4.3): the analyser's accuracy (% of reading + % of range, per channel and test),
  its phase accuracy, each instrument transformer's ratio error and phase displacement (one input
  per transformer, shared by both tests: the same instrument), the resistance meter and the
  thermometer. Rectangular unless the chain says ``distribution: normal`` (then the stated value
  is an expanded uncertainty at k = 2).

The rms and mean-value voltages come from the same analyser input: one error, common to both, so
the waveform correction (a ratio of the two) is not charged with it twice. The analyser's errors
of the two tests are independent inputs (different ranges); the waveform correction's own form is
an input of its own (``WAVEFORM_MODEL_BOUND``).

Not in the model: the no-load loss's dependence on how far the test voltage sat from rated (the
evaluation reports the loss as measured and warns instead); instrument-transformer errors that
change with current or burden (one error per transformer); efficiency and regulation.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from harness.calc.basis import basis_of
from harness.calc.chain import Analyser, MeasurementChain, standard_uncertainty
from harness.calc.corrections import ChannelErrors, corrected_record
from harness.calc.load import LoadResult, evaluate_load
from harness.calc.no_load import NoLoadResult, evaluate_no_load, waveform_settings
from harness.calc.phases import SQRT3, values_of

K = 2.0
# Central-difference step as a fraction of each input's standard uncertainty: small enough to be
# local, large enough to stay clear of rounding (values ~1e3, u/value ~1e-5 still leaves 1e-11).
STEP_FRACTION = 1e-3
TESTS = ("no_load", "load")
# Below this share a contribution is rounding of the central differences (an input that cancels
# out of the model, such as a gain common to U and U' in their ratio): left out of the budget.
NEGLIGIBLE_SHARE_PCT = 1e-9
# The waveform correction is an approximation of its own (the supply's harmonics move hysteresis
# and eddy losses differently from the form's assumption): it is charged with a rectangular bound
# of its own size, the correction counted from zero up to twice its value. A convention of this
# harness, no source; it leaves the no-load loss of a sinusoidal test uncharged.
WAVEFORM_MODEL_BOUND = 1.0
TEST_WORDS = {"no_load": "no-load test", "load": "load-loss test"}
SHORT = {"no_load": "no-load", "load": "load"}
FIELD_WORDS = {"voltage": "U", "voltage_mean": "U mean-value", "current": "I", "power": "P"}

Values = dict[str, float]


@dataclass(frozen=True)
class Input:
    name: str
    source: str
    value: float
    standard: float
    unit: str
    distribution: str
    degrees_of_freedom: float = math.inf
    """n - 1 for a type A mean (GUM 4.2.6); a type B bound is taken as exactly known."""


@dataclass(frozen=True)
class Contribution:
    source: str
    standard_uncertainty: float
    unit: str
    sensitivity: float
    contribution: float
    share_pct: float
    distribution: str

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class Budget:
    value: float
    standard: float
    k: float
    budget: tuple[Contribution, ...]
    effective_degrees_of_freedom: float = math.inf
    """Welch-Satterthwaite (GUM G.4.1); small values say k = 2 covers less than 95 %."""

    @property
    def expanded(self) -> float:
        return self.k * self.standard

    @property
    def largest(self) -> Contribution | None:
        return self.budget[0] if self.budget else None

    def to_dict(self) -> dict:
        return {"value": self.value, "standard": self.standard, "expanded": self.expanded, "k": self.k,
                "relative_expanded_pct": 100 * self.expanded / abs(self.value) if self.value else None,
                "largest_contributor": self.largest.source if self.largest else None,
                "effective_degrees_of_freedom": self.effective_degrees_of_freedom,
                "budget": [c.to_dict() for c in self.budget]}


# -- the quantities ------------------------------------------------------------------------------

def quantities(nl: NoLoadResult | None, ld: LoadResult | None) -> Values:
    """The results that get an uncertainty, under their results keys."""
    out: Values = {}
    if nl is not None:
        out["no_load_loss_W"] = nl.loss_W
        out["no_load_current_pct"] = nl.current_pct
    if ld is not None:
        out["load_loss_ref_W" if ld.loss_ref_W is not None else "load_loss_W"] = ld.performance_loss_W
        out["impedance_ref_pct" if ld.impedance_ref_pct is not None else "impedance_pct"] = ld.performance_impedance_pct
    if nl is not None and ld is not None:
        out["total_loss_W"] = nl.loss_W + ld.performance_loss_W
    return out


# -- the inputs ----------------------------------------------------------------------------------

def _n(record) -> int:
    return record.transformer.phases


def _channel_values(value, n: int) -> list[float]:
    items = list(values_of(value))
    return items if len(items) == n else items * n


def reading_inputs(name: str, test) -> list[Input]:
    """Each averaged reading, with its type A uncertainty when the record has the samples."""
    s = test.samples
    fields = [("voltage", "V"), ("voltage_mean", "V"), ("current", "A"), ("power", "W")]
    items = []
    for field, unit in fields:
        value = getattr(test, field, None)
        if value is None:
            continue
        sd = getattr(s, f"{field}_sd", None) if s is not None else None
        for k, v in enumerate(values_of(value)):
            items.append(Input(f"{name}.{field}.{k}", _reading_source(name, field, k, value, s), v,
                               _type_a(sd, k, s.count if s is not None else 0), unit, "type A",
                               s.count - 1 if s is not None else math.inf))
    return items


def _type_a(sd, k: int, count: int) -> float:
    """s / sqrt(n) of phase k (one standard deviation given for all phases applies to each)."""
    if sd is None:
        return 0.0
    return values_of(sd)[k if isinstance(sd, tuple) else 0] / math.sqrt(count)


def _reading_source(name: str, field: str, k: int, value, samples) -> str:
    phase = f" phase {k + 1}" if isinstance(value, tuple) else ""
    count = f", n = {samples.count}" if samples is not None else ""
    return f"{SHORT[name]} {FIELD_WORDS[field]}{phase} repeatability (type A{count})"


def _ratios(chain: MeasurementChain, k: int) -> tuple[float, float]:
    c = chain.channels[k]
    return (c.voltage_transformer.ratio if c.voltage_transformer else 1.0,
            c.current_transformer.ratio if c.current_transformer else 1.0)


def _ranges(test, analyser: Analyser, u_sec: float, i_sec: float) -> tuple[float, float]:
    r = test.analyser_ranges
    if r is None:
        return u_sec, i_sec  # the range is at least the reading: a lower bound of the % of range part
    return analyser.range_in_use("voltage", r.voltage), analyser.range_in_use("current", r.current)


def analyser_inputs(name: str, test, chain: MeasurementChain, n: int) -> list[Input]:
    """Relative errors of the analyser's U, I and P per channel, and its phase error."""
    a, items = chain.analyser, []
    u, i = _channel_values(test.voltage, n), _channel_values(test.current, n)
    star = SQRT3 if n == 3 else 1.0
    for k in range(n):
        kv, ki = _ratios(chain, k)
        # Three-phase channels see the phase (star) voltage of the line-to-line reading.
        u_sec, i_sec, p_sec = u[k] / star / kv, i[k] / ki, test.power / n / (kv * ki)
        ur, ir = _ranges(test, a, u_sec, i_sec)
        # Relative errors in % of reading: the % of range part counted at this reading.
        bounds = {"voltage": a.accuracy_on("voltage", ur).bound(u_sec, ur) / u_sec,
                  "current": a.accuracy_on("current", ir).bound(i_sec, ir) / i_sec,
                  "power": a.power.bound(p_sec, ur * ir) / p_sec}
        where = f"ch {k + 1}, {SHORT[name]}"
        items += [Input(f"{name}.analyser.{q}.{k}", f"analyser {FIELD_WORDS[q]} ({where})", 0.0,
                        standard_uncertainty(100 * b, a.distribution), "% of reading", a.distribution)
                  for q, b in bounds.items()]
        items.append(Input(f"{name}.analyser.phase.{k}", f"analyser phase ({where})", 0.0,
                           standard_uncertainty(a.phase, a.distribution), "rad", a.distribution))
    return items


def chain_inputs(chain: MeasurementChain, n: int) -> list[Input]:
    """Ratio error and phase displacement of every instrument transformer in use."""
    items = []
    for k, channel in enumerate(chain.channels_for(n)):
        for kind, words in (("vt", "VT"), ("ct", "CT")):
            it = channel.voltage_transformer if kind == "vt" else channel.current_transformer
            if it is None:
                continue
            where = f"{words} ch {k + 1}"
            items.append(Input(f"chain.{k}.{kind}.ratio_error", f"{where} ratio error", it.ratio_error,
                               standard_uncertainty(it.ratio_error_uncertainty, it.distribution), "%", it.distribution))
            items.append(Input(f"chain.{k}.{kind}.phase", f"{where} phase displacement", it.phase_displacement,
                               standard_uncertainty(it.phase_displacement_uncertainty, it.distribution), "rad",
                               it.distribution))
    return items


def resistance_inputs(record, chain: MeasurementChain) -> list[Input]:
    wr = record.winding_resistance
    if wr is None:
        return []
    meter, items = chain.resistance_meter, []
    for w in ("hv", "lv"):
        r = getattr(wr, w)
        for k, v in enumerate(values_of(r.resistance)):
            u = standard_uncertainty(v * meter.reading / 100 + meter.offset, meter.distribution) if meter else 0.0
            items.append(Input(f"resistance.{w}.{k}", f"resistance meter, {w} winding", v, u, "ohm",
                               meter.distribution if meter else "rectangular"))
        items.append(_temperature_input(f"resistance.{w}.temperature", f"thermometer, {w} resistance temperature",
                                        r.temperature, chain))
    return items


def _temperature_input(name: str, source: str, value: float, chain: MeasurementChain) -> Input:
    t = chain.thermometer
    u = standard_uncertainty(t.accuracy, t.distribution) if t else 0.0
    return Input(name, source, value, u, "K", t.distribution if t else "rectangular")


def temperature_inputs(record, chain: MeasurementChain) -> list[Input]:
    items = []
    for name in TESTS:
        test = getattr(record, name)
        if test is not None and test.temperature is not None:
            where = "winding temperature, load test" if name == "load" else "core temperature, no-load test"
            items.append(_temperature_input(f"{name}.temperature", f"thermometer, {where}",
                                            test.temperature, chain))
    return items


def waveform_inputs(record) -> list[Input]:
    if record.no_load is None or record.no_load.voltage_mean is None:
        return []
    return [Input("no_load.waveform_model", "waveform correction (its form)", 0.0,
                  standard_uncertainty(100 * WAVEFORM_MODEL_BOUND, "rectangular"), "% of the correction",
                  "rectangular")]


def inputs_of(record) -> list[Input]:
    """Every input of the model at its value (those without uncertainty included)."""
    chain, n = record.measurement_chain, _n(record)
    items = chain_inputs(chain, n)
    for name in TESTS:
        test = getattr(record, name)
        if test is not None:
            items += reading_inputs(name, test) + analyser_inputs(name, test, chain, n)
    items += waveform_inputs(record)
    return items + resistance_inputs(record, chain) + temperature_inputs(record, chain)


# -- the model -----------------------------------------------------------------------------------

def _phase_value(values: Values, prefix: str, like):
    if isinstance(like, tuple):
        return tuple(values[f"{prefix}.{k}"] for k in range(len(like)))
    return values[f"{prefix}.0"]


def _with_analyser_errors(values: Values, name: str, field: str, like, quantity: str, n: int):
    """Readings with the analyser's relative error of each channel removed, in the record's shape."""
    reading = _phase_value(values, f"{name}.{field}", like)
    items = _channel_values(reading, n)
    fixed = [items[k] * (1 - values.get(f"{name}.analyser.{quantity}.{k}", 0.0) / 100) for k in range(n)]
    return tuple(fixed) if isinstance(like, tuple) else sum(fixed) / n


def _test_update(values: Values, name: str, test, n: int) -> dict:
    update = {"voltage": _with_analyser_errors(values, name, "voltage", test.voltage, "voltage", n),
              "current": _with_analyser_errors(values, name, "current", test.current, "current", n)}
    if getattr(test, "voltage_mean", None) is not None:
        update["voltage_mean"] = _with_analyser_errors(values, name, "voltage_mean", test.voltage_mean, "voltage", n)
    e_p = sum(values.get(f"{name}.analyser.power.{k}", 0.0) for k in range(n)) / n / 100
    update["power"] = values[f"{name}.power.0"] * (1 - e_p)  # P (1 - mean e_k) = sum P/n (1 - e_k)
    if test.temperature is not None:
        update["temperature"] = values[f"{name}.temperature"]
    return update


def _resistances(values: Values, wr):
    if wr is None:
        return None
    update = {}
    for w in ("hv", "lv"):
        r = getattr(wr, w)
        update[w] = r.model_copy(update={"resistance": _phase_value(values, f"resistance.{w}", r.resistance),
                                         "temperature": values[f"resistance.{w}.temperature"]})
    return wr.model_copy(update=update)


def channel_errors_from(values: Values, name: str, n: int) -> list[ChannelErrors]:
    g = values.get
    return [ChannelErrors(g(f"chain.{k}.vt.ratio_error", 0.0), g(f"chain.{k}.ct.ratio_error", 0.0),
                          g(f"chain.{k}.vt.phase", 0.0), g(f"chain.{k}.ct.phase", 0.0),
                          g(f"{name}.analyser.phase.{k}", 0.0)) for k in range(n)]


def perturbed_record(record, values: Values):
    """The record with every input replaced by its value in ``values`` (analyser errors removed)."""
    n = _n(record)
    update = {name: getattr(record, name).model_copy(update=_test_update(values, name, getattr(record, name), n))
              for name in TESTS if getattr(record, name) is not None}
    update["winding_resistance"] = _resistances(values, record.winding_resistance)
    return record.model_copy(update=update)


def model(record, values: Values) -> Values:
    """The evaluation as a function of the inputs: corrections, then the no-load and load evaluation."""
    n = _n(record)
    errors = {name: channel_errors_from(values, name, n) for name in TESTS}
    corrected, _ = corrected_record(perturbed_record(record, values), errors)
    basis = basis_of(corrected)
    nl = evaluate_no_load(corrected.no_load, basis, waveform_settings(corrected))[0] if corrected.no_load else None
    ld = evaluate_load(corrected.load, corrected.winding_resistance, basis)[0] if corrected.load else None
    return quantities(_waveform_model(nl, values.get("no_load.waveform_model", 0.0)), ld)


def _waveform_model(nl: NoLoadResult | None, w: float) -> NoLoadResult | None:
    """The no-load loss with its waveform correction scaled by (1 + w/100): P0 (1 + (f - 1)(1 + w/100)) / f."""
    if nl is None or w == 0.0:
        return nl
    f = nl.waveform_correction_factor
    return dataclasses.replace(nl, loss_W=nl.loss_W * (1 + (f - 1) * (1 + w / 100)) / f)


# -- propagation ---------------------------------------------------------------------------------

def sensitivities(f: Callable[[Values], Values], nominal: Values, item: Input) -> Values:
    """dY/dx_i for every output Y, by a central difference around the input's value."""
    h = STEP_FRACTION * item.standard
    up = f({**nominal, item.name: item.value + h})
    down = f({**nominal, item.name: item.value - h})
    return {q: (up[q] - down[q]) / (2 * h) for q in up}


def budget_of(value: float, rows: list[tuple[Input, float]], k: float = K) -> Budget:
    """Combined standard uncertainty and the contributions, largest first."""
    u_c = math.sqrt(sum((c * i.standard) ** 2 for i, c in rows))
    parts = [Contribution(i.source, i.standard, i.unit, c, abs(c) * i.standard,
                          100 * (c * i.standard) ** 2 / u_c**2 if u_c > 0 else 0.0, i.distribution)
             for i, c in rows]
    parts.sort(key=lambda p: p.contribution, reverse=True)
    return Budget(value, u_c, k, tuple(p for p in parts if p.share_pct > NEGLIGIBLE_SHARE_PCT),
                  effective_dof(u_c, rows))


def effective_dof(u_c: float, rows: list[tuple[Input, float]]) -> float:
    """nu_eff = u_c^4 / sum (c_i u_i)^4 / nu_i  (GUM eq. (G.2b)); infinite when every input is type B."""
    denominator = sum((c * i.standard) ** 4 / i.degrees_of_freedom for i, c in rows
                      if math.isfinite(i.degrees_of_freedom) and c * i.standard != 0)
    return u_c**4 / denominator if denominator > 0 else math.inf


def propagate(f: Callable[[Values], Values], inputs: list[Input], k: float = K) -> dict[str, Budget]:
    """GUM eq. (10) on the model ``f`` for every output it gives."""
    nominal = {i.name: i.value for i in inputs}
    outputs = f(nominal)
    uncertain = [i for i in inputs if i.standard > 0]
    coefficients = [(i, sensitivities(f, nominal, i)) for i in uncertain]
    return {q: budget_of(y, [(i, c[q]) for i, c in coefficients], k) for q, y in outputs.items()}


def uncertainty(record) -> tuple[dict[str, Budget], list[str]]:
    """The budgets of a record with a measurement chain (empty without one), and warnings."""
    if record.measurement_chain is None:
        return {}, []
    budgets = propagate(lambda values: model(record, values), inputs_of(record))
    return budgets, input_warnings(record)


def input_warnings(record) -> list[str]:
    warnings = []
    for name in TESTS:
        test = getattr(record, name)
        if test is None:
            continue
        if test.samples is None:
            warnings.append(f"The record has no raw-sample statistics of the {TEST_WORDS[name]}: its uncertainty "
                            "has no type A part.")
        if test.analyser_ranges is None:
            warnings.append(f"The record gives no analyser ranges for the {TEST_WORDS[name]}: the % of range part "
                            "of the analyser's accuracy is taken at the reading, which understates it.")
    return warnings


def as_dict(budgets: Mapping[str, Budget]) -> dict[str, dict]:
    return {q: b.to_dict() for q, b in budgets.items()}
