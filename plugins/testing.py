"""The conformance kit: the checks every calculator, built-in or plugin, must pass.

Call it from a test module (it needs ``hypothesis``, part of rigbench's test extra)::

    import pytest
    from plugins.testing import conformance_checks
    from my_plugin import MyCalculator

    @pytest.mark.parametrize("check", conformance_checks(MyCalculator), ids=str)
    def test_meets_the_calculator_contract(check):
        check()

or run everything at once with :func:`check_calculator`. Each check is driven by hypothesis over
generic rigs (specifications only, no real products) and raises ``AssertionError`` naming what broke:

``contract``           loads through the registry from a fake entry point, as the service loads it
                       (:func:`plugins.registry.validate`: names, version, outputs, units, labels,
                       Params; a built-in's outputs need labels).
``params_defaults``    ``Params()`` validates, survives a JSON round trip, and computes through
                       :func:`plugins.compare.compare` with no params for any rigs.
``declared_outputs``   every declared output comes back, fits the batch's shape without growing it
                       (a sweep column stays at the axes it depends on), has its kind's dtype, is
                       finite unless declared ``nullable``, whole if declared ``integer``, and has
                       a unit pint can read.
``batch_equals_rows``  each row of a comparison equals that rig computed beside the baseline alone.
``sweep_equals_rows``  a sweep (telescopes × cameras × trains × mounts, any baseline) equals,
                       combination by combination, one row per combined rig.
``unit_strings``       lengths in inches and masses in pounds give the canonical-number answer.
``relative_outputs``   an output declared ``relative`` (a ratio to the baseline rig) is exactly 1 at
                       the baseline, in comparisons and sweeps, and ratios multiply through a third rig.

Floating outputs compare to 1e-12 relative (NaN equal to NaN): the same elementwise formula on the
same inputs, where numpy may take a different loop for arrays of different lengths, and inches and
pounds round-trip through binary floats by a few ulp. Integers, booleans and texts compare exactly.
The strategies of :mod:`plugins.strategies` (``rig_dicts``, ``rigs``, ``rig_lists``, ``sweeps``,
``train_dicts``, ``element_dicts``, ``in_imperial_units``), importable from here too, and :func:`compute` and
:func:`assert_outputs_equal` serve a calculator's own property tests.
"""

from __future__ import annotations

import itertools
import json
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from importlib.metadata import EntryPoint
from typing import Any

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pydantic import BaseModel

from calculators.base import Calculator
from calculators.batch import RigBatch
from calculators.schemas import Rig
from plugins.compare import compare
from plugins.registry import (
    GROUP,
    CalculatorEntry,
    ContractError,
    Registry,
    check_unit,
    load_registry,
    validate,
)
from plugins.runner import parse_params, run
from plugins.strategies import (
    KG_PER_POUND,
    MM_PER_INCH,
    camera_dicts,
    element_dicts,
    in_imperial_units,
    modifier_dicts,
    mount_dicts,
    rig_dicts,
    rig_lists,
    rigs,
    sweeps,
    telescope_dicts,
    train_dicts,
)

__all__ = [  # the checks, and the strategies of plugins.strategies for a calculator's own tests
    "CHECKS", "KG_PER_POUND", "MM_PER_INCH", "RTOL", "Check", "assert_outputs_equal", "camera_dicts",
    "check_calculator", "compute", "conformance_checks", "element_dicts", "in_imperial_units",
    "modifier_dicts", "mount_dicts", "rig_dicts", "rig_lists", "rigs", "sweeps", "telescope_dicts",
    "train_dicts",
]

RTOL = 1e-12
# A currency code, alone or in a compound unit ("EUR/cm^2"): money per batch, not a pint unit.
_MONEY = re.compile(r"\b(currency|[A-Z]{3})\b")


# --- computing and comparing ---------------------------------------------------------------------


def compute(
    calculator: Calculator, batch: RigBatch, params: BaseModel | None = None
) -> dict[str, np.ndarray]:
    """Outputs of ``calculator`` on ``batch``, each broadcast to the batch's shape (a calculator's
    error raises, for tests that expect one)."""
    raw = calculator.compute(batch, params if params is not None else calculator.Params())
    assert set(raw) == {o.name for o in calculator.outputs}, "outputs differ from the declaration"
    return {name: np.broadcast_to(values, batch.shape) for name, values in raw.items()}


def _run(calculator: Calculator, batch: RigBatch, params: BaseModel) -> dict[str, np.ndarray]:
    """Outputs through the runner, as the service computes them: its checks of the declared
    outputs (present, shapes, dtypes, finite unless nullable) fail the check."""
    result = run(calculator, batch, params)
    assert result.error is None, result.error
    return result.values


def assert_outputs_equal(calculator, actual: Mapping, expected: Mapping, rtol: float = RTOL) -> None:
    """Floating outputs equal to ``rtol`` (NaN where NaN); integers, booleans and texts exactly."""
    for output in calculator.outputs:
        a, e = np.asarray(actual[output.name]), np.asarray(expected[output.name])
        if output.kind == "number" and (a.dtype.kind == "f" or e.dtype.kind == "f"):
            np.testing.assert_allclose(a, e, rtol=rtol, atol=0, equal_nan=True, err_msg=output.name)
        else:
            np.testing.assert_array_equal(a, e, err_msg=output.name)


# --- the checks ----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Check:
    """One named check of one calculator; call it to run it."""

    name: str
    calculator: Calculator
    params: BaseModel
    examples: int
    body: Callable[..., None]

    def __call__(self) -> None:
        self.body(self)

    def __str__(self) -> str:
        return self.name

    def given(self, *strategies):
        """Decorator: run the function now under hypothesis, with this check's number of examples."""
        def run_now(test):
            settings(max_examples=self.examples, deadline=None,
                     suppress_health_check=[HealthCheck.too_slow])(given(*strategies)(test))()

        return run_now


def _contract(check: Check) -> None:
    # rigbench's own calculators (in calculators/) are held to the built-ins' rules: labels required.
    builtin = type(check.calculator).__module__.startswith("calculators.")
    try:
        validate(check.calculator, require_labels=builtin)
    except ContractError as exc:
        raise AssertionError(f"{check.calculator.name} breaks the calculator contract: {exc}") from None
    cls = type(check.calculator)
    if "<locals>" not in cls.__qualname__:  # importable: load it exactly as the service would
        ep = EntryPoint(check.calculator.name, f"{cls.__module__}:{cls.__qualname__}", GROUP)
        entry = load_registry([ep]).entries[0]
        assert entry.status == "loaded", entry.reason


def _registry(calculator: Calculator) -> Registry:
    return Registry(entries=[CalculatorEntry(name=calculator.name, distribution="conformance",
                                             version="0", status="loaded", calculator=calculator)])


def _params_defaults(check: Check) -> None:
    c = check.calculator
    defaults = c.Params()
    assert c.Params.model_validate({}) == defaults == parse_params(c, None)
    assert c.Params.model_validate(json.loads(defaults.model_dump_json())) == defaults

    @check.given(rig_lists(max_size=4, complete=None, wide=True))
    def through_compare(rig_list):
        result = compare(rig_list, [c.name], registry=_registry(c)).results[c.name]
        assert result.error is None, result.error
        assert list(result.outputs) == [o.name for o in c.outputs]
        assert all(len(out.values) == len(rig_list) for out in result.outputs.values())


def _check_shapes(calculator, batch: RigBatch, params) -> None:
    values = _run(calculator, batch, params)
    for output in calculator.outputs:
        if output.integer:  # a count: whole numbers (or null where declared nullable)
            v = np.asarray(values[output.name], dtype=float)
            assert np.all(np.isnan(v) | (v == np.round(v))), f"{output.name}: counts must be whole, got {v}"
    raw = calculator.compute(batch, params)
    for output in calculator.outputs:
        shape = np.shape(raw[output.name])
        assert len(shape) <= len(batch.shape) and np.broadcast_shapes(shape, batch.shape) == batch.shape, (
            f"{output.name}: shape {shape} does not fit the batch's {batch.shape} without growing it")
    units = calculator.output_units(batch, params)
    assert set(units) <= {o.name for o in calculator.outputs}, f"units for undeclared outputs: {units}"
    for output in calculator.outputs:
        check_unit(_MONEY.sub("dimensionless", units.get(output.name, output.unit)))


def _declared_outputs(check: Check) -> None:
    @check.given(rig_lists(max_size=4, complete=None, wide=True), sweeps(complete=None, wide=True))
    def declared(rig_list, sweep):
        *lists, baseline = sweep
        _check_shapes(check.calculator, RigBatch.from_rigs(rig_list), check.params)
        _check_shapes(check.calculator, RigBatch.from_components(*lists, baseline=baseline), check.params)


def _batch_equals_rows(check: Check) -> None:
    c, params = check.calculator, check.params

    @check.given(rig_lists(max_size=5, complete=None, wide=True))
    def batch_rows(rig_list):
        batch = _run(c, RigBatch.from_rigs(rig_list), params)
        for i, rig in enumerate(rig_list):
            pair = _run(c, RigBatch.from_rigs([rig_list[0], rig]), params)
            assert_outputs_equal(c, {k: v[i] for k, v in batch.items()}, {k: v[1] for k, v in pair.items()})


def _sweep_equals_rows(check: Check) -> None:
    c, params = check.calculator, check.params

    @check.given(sweeps(complete=None, wide=True))
    def sweep_rows(sweep):
        *lists, baseline = sweep
        swept = _run(c, RigBatch.from_components(*lists, baseline=baseline), params)
        rig_list = [Rig(name="combination", telescope=t, camera=k, train=r, mount=n)
                    for t, k, r, n in itertools.product(*lists)]
        flat_baseline = int(np.ravel_multi_index(baseline, tuple(len(items) for items in lists)))
        rows = _run(c, RigBatch.from_rigs(rig_list, baseline=flat_baseline), params)
        assert_outputs_equal(c, {k: v.reshape(-1) for k, v in swept.items()}, rows)


def _unit_strings(check: Check) -> None:
    c, params = check.calculator, check.params

    def same_answer(data):
        canonical = _run(c, RigBatch.from_rigs([Rig.model_validate(data)]), params)
        imperial = _run(c, RigBatch.from_rigs([Rig.model_validate(in_imperial_units(data))]), params)
        assert_outputs_equal(c, imperial, canonical)

    # Complete rigs too, so that an output needing every optional input is a number, not NaN.
    for complete in (False, True):
        check.given(rig_dicts(complete=complete, wide=True))(same_answer)


def _relative_outputs(check: Check) -> None:
    c, params = check.calculator, check.params
    relative = [o for o in c.outputs if o.relative and o.kind == "number"]

    def assert_one(values, output) -> None:
        assert values == 1.0 or (output.nullable and np.isnan(values)), (
            f"{output.name} is {values!r} at the baseline, not 1")

    @check.given(rig_lists(min_size=3, max_size=4, complete=None, wide=True), st.data(),
                 sweeps(complete=None, wide=True))
    def ratios(rig_list, data, sweep):
        base = data.draw(st.integers(0, len(rig_list) - 1))
        via_0, via_1 = (_run(c, RigBatch.from_rigs(rig_list, baseline=b), params) for b in (0, 1))
        itself = _run(c, RigBatch.from_rigs([rig_list[base]] * 2), params)
        at = _run(c, RigBatch.from_rigs(rig_list, baseline=base), params)
        *lists, baseline = sweep
        swept = _run(c, RigBatch.from_components(*lists, baseline=baseline), params)
        for o in relative:
            for values in (itself[o.name][0], itself[o.name][1], at[o.name][base], swept[o.name][baseline]):
                assert_one(values, o)
            # c/a = (c/b)·(b/a): three roundings of ~1e-16 each, so 1e-14 relative.
            np.testing.assert_allclose(via_0[o.name][2], via_1[o.name][2] * via_0[o.name][1], rtol=1e-14,
                                       equal_nan=True, err_msg=f"{o.name} through a third rig")


#: The checks in the order they run, with hypothesis's number of examples for each.
CHECKS: dict[str, tuple[Callable[[Check], None], int]] = {
    "contract": (_contract, 1),
    "params_defaults": (_params_defaults, 25),
    "declared_outputs": (_declared_outputs, 30),
    "batch_equals_rows": (_batch_equals_rows, 50),
    "sweep_equals_rows": (_sweep_equals_rows, 40),
    "unit_strings": (_unit_strings, 100),
    "relative_outputs": (_relative_outputs, 100),
}


def conformance_checks(
    calculator: type[Calculator] | Calculator,
    params: Mapping[str, Any] | BaseModel | None = None,
    *,
    max_examples: int | None = None,
) -> list[Check]:
    """The checks for a calculator class (instantiated with no arguments, as the registry does) or
    instance, computing with ``params`` (default: the Params defaults). ``max_examples`` sets
    hypothesis's number of examples for every check (default: 25 to 100, see :data:`CHECKS`)."""
    instance = calculator() if isinstance(calculator, type) else calculator
    parsed = parse_params(instance, params)
    return [Check(f"{instance.name}.{name}", instance, parsed, max_examples or examples, body)
            for name, (body, examples) in CHECKS.items()
            if name != "relative_outputs" or any(o.relative for o in instance.outputs)]


def check_calculator(calculator: type[Calculator] | Calculator, params=None, **options) -> None:
    """Run every check of :func:`conformance_checks` in turn; the first failure raises."""
    for check in conformance_checks(calculator, params, **options):
        check()
