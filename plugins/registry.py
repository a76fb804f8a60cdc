"""Discover calculators advertised in the ``rigbench.calculators`` entry-point group.

Built-in calculators are entry points of rigbench's own distribution, so the same discovery path
serves them and third-party plugins. The registry is built by the app factory (or by ``compare``),
never at import time.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from importlib.metadata import EntryPoint, entry_points
from typing import Literal

from calculators.base import Calculator
from calculators.errors import RigbenchError

GROUP = "rigbench.calculators"
BUILTIN_DISTRIBUTION = "rigbench"
NAME_PATTERN = re.compile(r"^[a-z][a-z0-9_]{0,62}$")

Status = Literal["loaded", "failed", "disabled"]


class UnknownCalculator(RigbenchError, KeyError):
    status = 422
    title = "Unknown calculator"

    def __str__(self) -> str:  # KeyError would quote the message
        return self.args[0]


@dataclass
class CalculatorEntry:
    """One entry point and what became of it."""

    name: str
    distribution: str
    version: str
    status: Status
    reason: str | None = None
    calculator: Calculator | None = None

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


def _distribution(ep: EntryPoint) -> tuple[str, str]:
    dist = getattr(ep, "dist", None)
    if dist is None:
        return "unknown", ""
    return dist.metadata["Name"], dist.version


def validate(calculator: Calculator) -> None:
    """Raise ``ValueError`` naming the first way ``calculator`` breaks the contract."""
    name = getattr(calculator, "name", None)
    if not isinstance(name, str) or not NAME_PATTERN.match(name):
        raise ValueError(f"name {name!r} is not lower_snake_case of at most 63 characters")
    for attr in ("version", "summary"):
        if not isinstance(getattr(calculator, attr, None), str) or not getattr(calculator, attr):
            raise ValueError(f"{attr} must be a non-empty string")
    outputs = getattr(calculator, "outputs", None)
    if not outputs:
        raise ValueError("declares no outputs")
    if not callable(getattr(calculator, "compute", None)):
        raise ValueError("has no compute method")


def load_registry(
    eps: Iterable[EntryPoint] | None = None, disabled: Iterable[str] = ()
) -> Registry:
    """Load every calculator entry point; refuse (but list) the ones that break the contract."""
    if eps is None:
        eps = entry_points(group=GROUP)
    disabled = set(disabled)
    ordered = sorted(eps, key=lambda ep: (_distribution(ep)[0] != BUILTIN_DISTRIBUTION, ep.name))
    registry = Registry()
    taken: set[str] = set()
    for ep in ordered:
        dist, version = _distribution(ep)
        entry = CalculatorEntry(name=ep.name, distribution=dist, version=version, status="failed")
        registry.entries.append(entry)
        if ep.name in disabled or dist in disabled:
            entry.status, entry.reason = "disabled", "disabled by settings"
            continue
        try:
            obj = ep.load()
            calculator = obj() if isinstance(obj, type) else obj
            validate(calculator)
        except Exception as exc:  # a plugin may fail in any way; we list it and carry on
            entry.reason = f"{type(exc).__name__}: {exc}"
            continue
        entry.name = calculator.name
        if calculator.name in taken:
            entry.reason = f"name {calculator.name!r} is already taken by an earlier calculator"
            continue
        taken.add(calculator.name)
        entry.status, entry.calculator = "loaded", calculator
    return registry
