"""Discover calculators advertised in the ``rigbench.calculators`` entry-point group.

Built-in calculators are entry points of rigbench's own distribution, so the same discovery path
serves them and third-party plugins. The registry is built by the app factory (or by ``compare``),
never at import time.

Loading is where a plugin is judged: every entry point ends up as one :class:`CalculatorEntry` whose
status is

* ``loaded``   — imported, instantiated and found to meet the contract (:func:`validate`);
* ``failed``   — it did not import, did not instantiate, broke the contract, or lost a name clash;
  ``reason`` says which, naming the offending attribute;
* ``disabled`` — named (by calculator or by distribution) in the settings; it is not even imported.

Name clashes are settled the same way on every run: entry points are taken built-ins first (the
distribution ``rigbench``), then by distribution name, entry-point name and target. The first holder
of a name keeps it and every later claimant is ``failed`` with the holder named in its reason. The
names of rigbench's own entry points are reserved even when the built-in itself failed or is
disabled, so a plugin never silently stands in for a built-in.
"""

from __future__ import annotations

import copy
import logging
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from importlib.metadata import EntryPoint, entry_points
from typing import Literal

from pydantic import BaseModel

from calculators.base import Calculator, Output
from calculators.errors import RigbenchError
from calculators.units import unit_registry
from plugins.runner import DEFAULT_TIME_BUDGET_S, set_time_budget, time_budget

GROUP = "rigbench.calculators"
BUILTIN_DISTRIBUTION = "rigbench"
NAME_PATTERN = re.compile(r"^[a-z][a-z0-9_]{0,62}$")
# PEP 440 in its common forms ("1", "1.0.2", "2.1rc1", "0.3.dev4", "1.0+local"), checked loosely:
# the version is shown to people and stored with results, not compared.
VERSION_PATTERN = re.compile(r"^[0-9]+(\.[0-9]+)*((a|b|rc|\.post|\.dev)[0-9]+)*(\+[A-Za-z0-9.]+)?$")
SUMMARY_MAX = 200
OUTPUT_KINDS = ("number", "text", "boolean")

Status = Literal["loaded", "failed", "disabled"]

logger = logging.getLogger(__name__)


class UnknownCalculator(RigbenchError, KeyError):
    status = 422
    title = "Unknown calculator"

    def __str__(self) -> str:  # KeyError would quote the message
        return self.args[0]


class ContractError(RigbenchError, ValueError):
    """A calculator does not meet the contract of :class:`calculators.base.Calculator`."""


@dataclass
class CalculatorEntry:
    """One entry point and what became of it."""

    name: str
    distribution: str
    version: str
    status: Status
    reason: str | None = None
    calculator: Calculator | None = None
    target: str = ""  # the entry point's "module:attribute"

    @property
    def builtin(self) -> bool:
        return self.distribution == BUILTIN_DISTRIBUTION


@dataclass
class Registry:
    entries: list[CalculatorEntry] = field(default_factory=list)

    @property
    def calculators(self) -> dict[str, Calculator]:
        """Loaded calculators by name, built-ins first."""
        return {e.name: e.calculator for e in self.entries if e.status == "loaded"}

    def origin(self, name: str) -> CalculatorEntry:
        for entry in self.entries:
            if entry.name == name and entry.status == "loaded":
                return entry
        raise self.unknown(name)

    def get(self, name: str) -> Calculator:
        try:
            return self.calculators[name]
        except KeyError:
            raise self.unknown(name) from None

    def unknown(self, name: str) -> UnknownCalculator:
        known = ", ".join(sorted(self.calculators))
        return UnknownCalculator(f"no calculator named {name!r}; available: {known}")

    def runs_third_party(self, names: Iterable[str]) -> bool:
        """Whether any of the named loaded calculators is third-party, so computing them may wait on
        a time budget: an async caller should then run the comparison in a worker thread."""
        calculators = self.calculators
        return any(time_budget(calculators[n]) is not None for n in names if n in calculators)

    def distributions(self) -> dict[str, list[CalculatorEntry]]:
        """Entries grouped by the distribution that advertised them, rigbench first."""
        grouped: dict[str, list[CalculatorEntry]] = {}
        for entry in self.entries:
            grouped.setdefault(entry.distribution, []).append(entry)
        return grouped


def normalize_distribution(name: str) -> str:
    """PEP 503 normalisation, so ``Rigbench_Dew`` in the settings matches ``rigbench-dew``."""
    return re.sub(r"[-_.]+", "-", name).lower()


def _distribution(ep: EntryPoint) -> tuple[str, str]:
    dist = getattr(ep, "dist", None)
    if dist is None:
        return "unknown", ""
    return dist.metadata["Name"] or "unknown", dist.version or ""


# Units rigbench outputs use that pint does not define: the astronomical magnitude (a logarithmic
# scale, dimensionless for our purpose) and money, whose actual ISO 4217 code a calculator gives per
# batch through ``output_units``.
_MAGNITUDE = re.compile(r"\bmag\b")
_CURRENCY = re.compile(r"^(currency|[A-Z]{3})$")
# What a unit expression may contain. Checked before pint sees it: pint evaluates exponents, and an
# expression such as "9**9**9 mm" would compute a huge integer and hang the load.
_UNIT_TEXT = re.compile(r"^[A-Za-z0-9µμΩ°%_ */()^.\-]{0,60}$")
_CHAINED_EXPONENT = re.compile(r"(\^|\*\*)\s*-?[0-9.]+\s*(\^|\*\*)")
_LONG_NUMBER = re.compile(r"[0-9]{3,}")


def check_unit(unit: object) -> None:
    """Raise ``ValueError`` unless ``unit`` is a unit pint can read ("" = dimensionless)."""
    if not isinstance(unit, str):
        raise ValueError(f"unit must be a string, got {type(unit).__name__}")
    if unit == "" or _CURRENCY.match(unit):
        return
    if not _UNIT_TEXT.match(unit) or _CHAINED_EXPONENT.search(unit) or _LONG_NUMBER.search(unit):
        raise ValueError(f"unit {unit!r} is not a plain unit expression such as 'mm^2' or 'W/m^2'")
    try:
        unit_registry().parse_units(_MAGNITUDE.sub("dimensionless", unit))
    except Exception:  # pint raises several error types for text it cannot read
        raise ValueError(f"unit {unit!r} is not one pint can read (e.g. 'mm', 'arcsec', 'kg', 'W')") from None


#: Longest output label: a table header, not a sentence.
LABEL_MAX = 40


def _check_output(output: object, index: int, require_label: bool = False) -> None:
    if not isinstance(output, Output):
        raise ContractError(
            f"outputs[{index}] is a {type(output).__name__}, not a calculators.base.Output"
        )
    where = f"output {output.name!r}" if isinstance(output.name, str) else f"outputs[{index}]"
    if not isinstance(output.name, str) or not NAME_PATTERN.match(output.name):
        raise ContractError(f"{where}: name is not lower_snake_case of at most 63 characters")
    try:
        check_unit(output.unit)
    except ValueError as exc:
        raise ContractError(f"{where}: {exc}") from None
    if not isinstance(output.description, str) or not output.description.strip():
        raise ContractError(f"{where}: description must be a non-empty string")
    if output.kind not in OUTPUT_KINDS:
        raise ContractError(f"{where}: kind {output.kind!r} is not one of {', '.join(OUTPUT_KINDS)}")
    if output.label is not None and (
        not isinstance(output.label, str) or not output.label.strip() or len(output.label) > LABEL_MAX
    ):
        raise ContractError(f"{where}: label must be a non-empty string of at most {LABEL_MAX} characters")
    if require_label and output.label is None:
        raise ContractError(f"{where}: a built-in output needs a label (e.g. label=\"Pixel scale\")")


def _check_strings(calculator: Calculator, attr: str, *, required: bool) -> None:
    values = getattr(calculator, attr, None)
    if not isinstance(values, (tuple, list)) or not all(
        isinstance(v, str) and v.strip() for v in values
    ):
        raise ContractError(f"{attr} must be a tuple of non-empty strings")
    if required and not values:
        raise ContractError(f"{attr} is empty: name where the formulas come from")


def _check_renames(calculator: Calculator, names: set[str]) -> None:
    renamed = getattr(calculator, "renamed_outputs", {})
    if not isinstance(renamed, Mapping):
        raise ContractError("renamed_outputs must be a mapping of old output name to new output name")
    for old, new in renamed.items():
        if old in names:
            raise ContractError(f"renamed_outputs: old name {old!r} is still a declared output")
        if new not in names:
            raise ContractError(f"renamed_outputs: {old!r} is renamed to {new!r}, which is not a declared output")


def _check_params(calculator: Calculator) -> None:
    params = getattr(calculator, "Params", None)
    if not (isinstance(params, type) and issubclass(params, BaseModel)):
        raise ContractError("Params must be a pydantic model class (calculators.base.NoParams if none)")
    required = [name for name, f in params.model_fields.items() if f.is_required()]
    if required:
        raise ContractError(f"Params field(s) {', '.join(required)} have no default")
    try:
        params.model_validate({})
    except Exception as exc:
        raise ContractError(f"Params defaults do not validate: {exc}") from None


def validate(calculator: object, *, require_labels: bool = False) -> None:
    """Raise :class:`ContractError` naming the first way ``calculator`` breaks the contract.

    Checked: it is a :class:`~calculators.base.Calculator`; ``name`` is lower_snake_case;
    ``version`` is a PEP 440 version; ``summary`` is one non-empty line; ``outputs`` is a non-empty
    tuple of :class:`~calculators.base.Output` with unique lower_snake_case names, units pint can
    read, known kinds and labels of at most 40 characters (required with ``require_labels``, as for
    the built-ins; a plugin's output without one is shown with a label derived from its name);
    ``renamed_outputs`` maps old names to declared outputs; ``Params`` is a pydantic model whose
    fields all have valid defaults; ``compute`` and ``output_units`` are callable; ``sources`` is
    non-empty and ``cautions`` a tuple of strings.
    """
    if not isinstance(calculator, Calculator):
        raise ContractError(
            f"{type(calculator).__name__} is not a calculators.base.Calculator (subclass it)"
        )
    name = getattr(calculator, "name", None)
    if not isinstance(name, str) or not NAME_PATTERN.match(name):
        raise ContractError(f"name {name!r} is not lower_snake_case of at most 63 characters")
    version = getattr(calculator, "version", None)
    if not isinstance(version, str) or not VERSION_PATTERN.match(version):
        raise ContractError(f"version {version!r} is not a version such as '1.0.0'")
    summary = getattr(calculator, "summary", None)
    if not isinstance(summary, str) or not summary.strip() or "\n" in summary:
        raise ContractError("summary must be one non-empty line")
    if len(summary) > SUMMARY_MAX:
        raise ContractError(f"summary is {len(summary)} characters long, more than {SUMMARY_MAX}")
    outputs = getattr(calculator, "outputs", None)
    if not isinstance(outputs, (tuple, list)) or not outputs:
        raise ContractError("outputs must be a non-empty tuple of calculators.base.Output")
    for index, output in enumerate(outputs):
        _check_output(output, index, require_labels)
    names = [o.name for o in outputs]
    duplicates = sorted({n for n in names if names.count(n) > 1})
    if duplicates:
        raise ContractError(f"output name(s) {', '.join(duplicates)} declared more than once")
    _check_renames(calculator, set(names))
    _check_params(calculator)
    for method in ("compute", "output_units"):
        if not callable(getattr(calculator, method, None)):
            raise ContractError(f"{method} is not callable")
    if type(calculator).compute is Calculator.compute:
        raise ContractError("compute is not implemented (it is the base class's)")
    _check_strings(calculator, "sources", required=True)
    _check_strings(calculator, "cautions", required=False)


def _instantiate(obj: object) -> Calculator:
    """A calculator from an entry point's target: a class is instantiated with no arguments; an
    object is copied, so that the run-time policy set on it belongs to this registry alone."""
    if isinstance(obj, type):
        return obj()
    try:
        return copy.copy(obj)
    except Exception:  # an object that cannot be copied is used as it is
        return obj


def _order(eps: Iterable[EntryPoint]) -> list[EntryPoint]:
    def key(ep: EntryPoint) -> tuple:
        dist = normalize_distribution(_distribution(ep)[0])
        return (dist != BUILTIN_DISTRIBUTION, dist, ep.name, ep.value)

    return sorted(eps, key=key)


def load_registry(
    eps: Iterable[EntryPoint] | None = None,
    disabled: Iterable[str] = (),
    *,
    time_budget_s: float | None = DEFAULT_TIME_BUDGET_S,
) -> Registry:
    """Load every calculator entry point; refuse (but list) the ones that break the contract.

    ``eps`` defaults to the installed entry points of the ``rigbench.calculators`` group; tests pass
    their own. ``disabled`` holds calculator names and distribution names not to load (a list, or
one comma-separated string); they are not even imported.
    ``time_budget_s`` bounds each third-party ``compute`` call (see :func:`plugins.runner.run`);
    built-ins always run inline, without a budget.
    """
    if time_budget_s is not None and not time_budget_s > 0:
        raise ValueError(f"a time budget must be a positive number of seconds, got {time_budget_s!r}")
    if eps is None:
        eps = entry_points(group=GROUP)
    if isinstance(disabled, str):  # "a,b" straight from an environment variable
        disabled = disabled.split(",")
    disabled_names = {d.strip() for d in disabled if d.strip()}
    disabled_dists = {normalize_distribution(d) for d in disabled_names}
    ordered = _order(eps)
    reserved = {
        ep.name: _distribution(ep)[1]
        for ep in ordered
        if normalize_distribution(_distribution(ep)[0]) == BUILTIN_DISTRIBUTION
    }
    registry = Registry()
    holders: dict[str, CalculatorEntry] = {}
    for ep in ordered:
        dist, version = _distribution(ep)
        entry = CalculatorEntry(
            name=ep.name, distribution=dist, version=version, status="failed", target=ep.value
        )
        registry.entries.append(entry)
        if ep.name in disabled_names or normalize_distribution(dist) in disabled_dists:
            entry.status, entry.reason = "disabled", "disabled by settings"
            continue
        if not entry.builtin and ep.name in reserved:
            entry.reason = (
                f"name {ep.name!r} belongs to the built-in calculator of rigbench "
                f"{reserved[ep.name]}; the built-in wins"
            )
            _refused(entry)
            continue
        if ep.name in holders:
            entry.reason = _clash(ep.name, holders[ep.name])
            _refused(entry)
            continue
        try:
            calculator = _instantiate(ep.load())
            validate(calculator, require_labels=entry.builtin)
            if calculator.name != ep.name:
                raise ContractError(
                    f"the entry point is named {ep.name!r} but the calculator's name is "
                    f"{calculator.name!r}; they must be the same"
                )
            set_time_budget(calculator, None if entry.builtin else time_budget_s)
        except ContractError as exc:
            entry.reason = f"breaks the calculator contract: {exc}"
            _refused(entry)
            continue
        except BaseException as exc:  # a plugin may fail in any way, even sys.exit at import
            if isinstance(exc, KeyboardInterrupt):
                raise
            entry.reason = f"could not be loaded: {type(exc).__name__}: {exc}"
            _refused(entry)
            continue
        entry.status, entry.calculator = "loaded", calculator
        holders[ep.name] = entry
    return registry


def _clash(name: str, holder: CalculatorEntry) -> str:
    return (
        f"name {name!r} is already taken by {holder.target or name} from "
        f"{holder.distribution} {holder.version}".rstrip()
    )


def _refused(entry: CalculatorEntry) -> None:
    logger.warning(
        "calculator plugin %r (%s %s, %s) refused: %s",
        entry.name, entry.distribution, entry.version, entry.target, entry.reason,
    )
