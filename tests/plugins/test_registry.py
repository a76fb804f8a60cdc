"""Tests of plugins/registry.py: discovery, validation at load, clashes and disabling.

Every test builds its own entry points (see ``plugin_fakes``) instead of relying on what is installed,
except the one that checks that rigbench's own built-ins are found through the real entry points.
"""

from __future__ import annotations

import itertools
import logging

import pytest
from plugin_fakes import GOOD_INSTANCE, LIGHT_GRASP, Good, builtin, entry_point

from calculators.builtin.light_grasp import LightGrasp
from plugins.registry import (
    BUILTIN_DISTRIBUTION,
    ContractError,
    check_unit,
    load_registry,
    normalize_distribution,
    validate,
)
from plugins.runner import DEFAULT_TIME_BUDGET_S, time_budget


def entry(registry, name, distribution=None):
    matches = [
        e for e in registry.entries
        if e.name == name and (distribution is None or e.distribution == distribution)
    ]
    assert len(matches) == 1, matches
    return matches[0]


def test_a_plugin_that_meets_the_contract_is_loaded_with_its_distribution():
    registry = load_registry([builtin(*LIGHT_GRASP), entry_point("good", "plugin_fakes:Good")])
    good = entry(registry, "good")
    assert (good.status, good.reason) == ("loaded", None)
    assert (good.distribution, good.version, good.target) == ("acme-bench-tools", "0.3.1", "plugin_fakes:Good")
    assert not good.builtin
    assert isinstance(registry.get("good"), Good)
    assert registry.origin("good") is good
    assert list(registry.calculators) == ["light_grasp", "good"]  # built-ins first


def test_builtins_are_found_through_rigbench_s_own_entry_points():
    registry = load_registry()  # the real, installed entry points
    light_grasp = entry(registry, "light_grasp", BUILTIN_DISTRIBUTION)
    assert light_grasp.status == "loaded"
    assert light_grasp.builtin
    assert isinstance(light_grasp.calculator, LightGrasp)


def test_an_entry_point_object_is_copied_so_each_registry_owns_its_instance():
    registry = load_registry([entry_point("good", "plugin_fakes:GOOD_INSTANCE")], time_budget_s=0.5)
    loaded = registry.get("good")
    assert loaded is not GOOD_INSTANCE
    assert time_budget(loaded) == 0.5
    assert time_budget(GOOD_INSTANCE) is None


def test_built_ins_run_inline_and_plugins_under_the_time_budget():
    registry = load_registry([builtin(*LIGHT_GRASP), entry_point("good", "plugin_fakes:Good")])
    assert time_budget(registry.get("light_grasp")) is None
    assert time_budget(registry.get("good")) == DEFAULT_TIME_BUDGET_S


def test_runs_third_party_tells_whether_a_comparison_may_wait_on_a_budget():
    registry = load_registry([builtin(*LIGHT_GRASP), entry_point("good", "plugin_fakes:Good")])
    assert not registry.runs_third_party(["light_grasp"])
    assert registry.runs_third_party(["light_grasp", "good"])
    assert not registry.runs_third_party(["no_such_calculator"])


def test_two_registries_share_no_state():
    first = load_registry([entry_point("good", "plugin_fakes:Good")], time_budget_s=1.0)
    second = load_registry([entry_point("good", "plugin_fakes:Good")], time_budget_s=3.0)
    assert first.get("good") is not second.get("good")
    assert (time_budget(first.get("good")), time_budget(second.get("good"))) == (1.0, 3.0)


CONTRACT_VIOLATIONS = [
    ("BadName", "name 'Bad-Name' is not lower_snake_case"),
    ("NoVersion", "version '' is not a version"),
    ("BadVersion", "version 'version one' is not a version"),
    ("NoSummary", "summary must be one non-empty line"),
    ("NoOutputs", "outputs must be a non-empty tuple"),
    ("OutputNotDeclared", "outputs[0] is a tuple, not a calculators.base.Output"),
    ("UnknownUnit", "unit 'lumens per banana' is not one pint can read"),
    ("HugeUnit", "unit '9**9**9 mm' is not a plain unit expression"),
    ("DuplicateOutputs", "output name(s) scaled_aperture_mm declared more than once"),
    ("EmptyLabel", "label must be a non-empty string of at most 40 characters"),
    ("RenamedToNothing", "renamed to 'no_such_output', which is not a declared output"),
    ("RenamedStillDeclared", "old name 'scaled_aperture_mm' is still a declared output"),
    ("BadOutputKind", "kind 'complex' is not one of number, text, boolean"),
    ("ParamsNotPydantic", "Params must be a pydantic model class"),
    ("ParamsWithoutDefault", "Params field(s) scale have no default"),
    ("ParamsBadDefault", "Params defaults do not validate"),
    ("ComputeNotCallable", "compute is not callable"),
    ("ComputeNotImplemented", "compute is not implemented"),
    ("NoSources", "sources is empty"),
    ("SourcesAString", "sources must be a tuple of non-empty strings"),
    ("NotACalculator", "NotACalculator is not a calculators.base.Calculator"),
]


@pytest.mark.parametrize(("target", "reason"), CONTRACT_VIOLATIONS, ids=[c[0] for c in CONTRACT_VIOLATIONS])
def test_a_contract_violation_is_refused_with_its_reason_and_the_rest_loads(target, reason):
    registry = load_registry([
        builtin(*LIGHT_GRASP),
        entry_point("good", f"plugin_fakes:{target}", dist="broken-bench-tools"),
    ])
    broken = entry(registry, "good")
    assert broken.status == "failed"
    assert broken.calculator is None
    assert broken.reason.startswith("breaks the calculator contract: ")
    assert reason in broken.reason
    assert list(registry.calculators) == ["light_grasp"]


def test_a_third_party_output_without_a_label_loads_with_one_derived_from_its_name():
    registry = load_registry([entry_point("good", "plugin_fakes:Unlabelled")])
    [output] = registry.get("good").outputs
    assert output.label is None and output.shown_label == "Scaled aperture"


def test_a_builtin_output_without_a_label_is_refused():
    registry = load_registry([builtin("good", "plugin_fakes:Unlabelled")])
    refused = entry(registry, "good")
    assert refused.status == "failed"
    assert "output 'scaled_aperture_mm': a built-in output needs a label" in refused.reason


def test_every_builtin_output_has_a_label():
    registry = load_registry()
    for name, calculator in registry.calculators.items():
        if registry.origin(name).builtin:
            assert all(o.label for o in calculator.outputs), name


def test_validate_accepts_the_model_calculator():
    validate(LightGrasp())
    validate(Good())


def test_validate_errors_are_value_errors():
    with pytest.raises(ValueError, match="sources is empty"):
        validate(type("Sourceless", (Good,), {"sources": ()})())
    assert issubclass(ContractError, ValueError)


@pytest.mark.parametrize(
    ("target", "reason"),
    [
        ("plugin_broken_import:NeverSeen",
         "ModuleNotFoundError: No module named 'rigbench_fake_dependency_that_is_not_installed'"),
        ("plugin_crashes_at_import:Anything", "RuntimeError: configuration file missing"),
        ("plugin_exits_at_import:Anything", "SystemExit: plugin gave up"),
        ("plugin_fakes:DoesNotExist", "AttributeError"),
        ("rigbench_no_such_module:Calculator", "ModuleNotFoundError"),
        ("plugin_fakes:NeedsArguments", "TypeError"),
    ],
)
def test_a_plugin_that_cannot_be_loaded_is_failed_with_the_reason(target, reason):
    registry = load_registry([builtin(*LIGHT_GRASP), entry_point("good", target)])
    broken = entry(registry, "good")
    assert broken.status == "failed"
    assert broken.reason.startswith("could not be loaded: ")
    assert reason in broken.reason
    assert registry.get("light_grasp") is not None


def test_a_refused_plugin_is_logged_with_its_name_distribution_and_reason(caplog):
    with caplog.at_level(logging.WARNING, logger="plugins.registry"):
        load_registry([entry_point("good", "plugin_fakes:NoSources", dist="acme-bench-tools")])
    [record] = caplog.records
    assert "'good'" in record.getMessage()
    assert "acme-bench-tools" in record.getMessage()
    assert "sources is empty" in record.getMessage()


def test_the_entry_point_name_must_be_the_calculator_s_name():
    registry = load_registry([entry_point("good", "plugin_fakes:OtherName")])
    assert entry(registry, "good").status == "failed"
    assert "the calculator's name is 'other'" in entry(registry, "good").reason


@pytest.mark.parametrize("order", list(itertools.permutations(range(3))))
def test_a_built_in_wins_a_name_clash_whatever_the_discovery_order(order):
    eps = [
        entry_point("light_grasp", "plugin_fakes:Good", dist="zeta-tools"),
        builtin(*LIGHT_GRASP),
        entry_point("light_grasp", "plugin_fakes:Good", dist="alpha-tools"),
    ]
    registry = load_registry([eps[i] for i in order])
    assert isinstance(registry.get("light_grasp"), LightGrasp)
    assert entry(registry, "light_grasp", "rigbench").status == "loaded"
    for loser in ("alpha-tools", "zeta-tools"):
        lost = entry(registry, "light_grasp", loser)
        assert lost.status == "failed"
        assert "belongs to the built-in calculator of rigbench 0.1.0; the built-in wins" in lost.reason
    assert [e.distribution for e in registry.entries] == ["rigbench", "alpha-tools", "zeta-tools"]


def test_a_built_in_name_stays_reserved_when_the_built_in_fails_or_is_disabled():
    eps = [builtin("speed", "calculators.no_such_module:Speed"), entry_point("speed", "plugin_fakes:Good")]
    for disabled in ((), ("rigbench",)):
        registry = load_registry(eps, disabled=disabled)
        plugin = entry(registry, "speed", "acme-bench-tools")
        assert plugin.status == "failed"
        assert "the built-in wins" in plugin.reason
        assert "speed" not in registry.calculators


@pytest.mark.parametrize("order", [(0, 1), (1, 0)])
def test_a_clash_between_plugins_goes_to_the_first_distribution_by_name(order):
    eps = [
        entry_point("good", "plugin_fakes:Good", dist="beta-tools", version="2.0"),
        entry_point("good", "plugin_fakes:GOOD_INSTANCE", dist="alpha-tools", version="1.0"),
    ]
    registry = load_registry([eps[i] for i in order])
    assert entry(registry, "good", "alpha-tools").status == "loaded"
    beta = entry(registry, "good", "beta-tools")
    assert beta.status == "failed"
    assert beta.reason == "name 'good' is already taken by plugin_fakes:GOOD_INSTANCE from alpha-tools 1.0"


def test_a_plugin_that_failed_does_not_hold_its_name():
    registry = load_registry([
        entry_point("good", "plugin_fakes:NoSources", dist="alpha-tools"),
        entry_point("good", "plugin_fakes:Good", dist="beta-tools"),
    ])
    assert registry.origin("good").distribution == "beta-tools"


@pytest.mark.parametrize("setting", ["good", "acme-bench-tools", "Acme_Bench.Tools", " good "])
def test_a_plugin_disabled_by_calculator_or_distribution_name_is_not_imported(setting):
    registry = load_registry(
        [builtin(*LIGHT_GRASP), entry_point("good", "plugin_broken_import:NeverSeen")],
        disabled=[setting],
    )
    disabled = entry(registry, "good")
    # had it been imported, it would have failed with ModuleNotFoundError
    assert (disabled.status, disabled.reason) == ("disabled", "disabled by settings")
    assert list(registry.calculators) == ["light_grasp"]


def test_disabled_may_be_one_comma_separated_string():
    registry = load_registry(
        [builtin(*LIGHT_GRASP), entry_point("good", "plugin_fakes:Good"), entry_point("raises", "plugin_fakes:Raises")],
        disabled="good, raises",
    )
    assert list(registry.calculators) == ["light_grasp"]


def test_built_ins_can_be_disabled_by_name():
    registry = load_registry([builtin(*LIGHT_GRASP), entry_point("good", "plugin_fakes:Good")],
                             disabled=["light_grasp"])
    assert entry(registry, "light_grasp").status == "disabled"
    assert list(registry.calculators) == ["good"]


def test_an_unknown_calculator_names_the_available_ones():
    registry = load_registry([builtin(*LIGHT_GRASP), entry_point("good", "plugin_fakes:Good")])
    with pytest.raises(KeyError) as caught:
        registry.get("dew")
    assert str(caught.value) == "no calculator named 'dew'; available: good, light_grasp"


def test_distributions_groups_entries_rigbench_first():
    registry = load_registry([
        entry_point("good", "plugin_fakes:Good", dist="acme-bench-tools"),
        entry_point("raises", "plugin_fakes:Raises", dist="acme-bench-tools"),
        builtin(*LIGHT_GRASP),
    ])
    grouped = registry.distributions()
    assert list(grouped) == ["rigbench", "acme-bench-tools"]
    assert [e.name for e in grouped["acme-bench-tools"]] == ["good", "raises"]


def test_invalid_time_budget_is_refused():
    with pytest.raises(ValueError, match="positive number of seconds"):
        load_registry([entry_point("good", "plugin_fakes:Good")], time_budget_s=0)


@pytest.mark.parametrize("unit", ["", "mm", "mm^2", "arcsec", "kg*m^2", "W/(m^2*K)", "degC", "percent",
                                  "mag", "mag/arcsec^2", "EUR", "currency", "1/mm", "s"])
def test_check_unit_accepts_pint_units_magnitudes_and_currencies(unit):
    check_unit(unit)


@pytest.mark.parametrize("unit", ["parsecs per banana", "mm^99^99", "9**9**9 mm", "2*mm", "mm; import os",
                                  "x" * 80, None, 3])
def test_check_unit_refuses_what_pint_cannot_read_safely(unit):
    with pytest.raises(ValueError):
        check_unit(unit)


def test_normalize_distribution_follows_pep_503():
    # PEP 503, "Normalized Names": runs of -, _ and . become one -, lower case
    assert normalize_distribution("Rigbench_Dew..Tools") == "rigbench-dew-tools"
