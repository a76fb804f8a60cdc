"""`/v1/plugins`: every distribution that advertises calculators, rigbench included, and what became of each."""

from typing import Literal

from fastapi import APIRouter, Request
from pydantic import BaseModel, Field

from plugins.registry import CalculatorEntry, Registry

router = APIRouter(prefix="/v1/plugins", tags=["plugins"])

Status = Literal["loaded", "failed", "disabled"]


class PluginCalculatorPublic(BaseModel):
    name: str = Field(description="Calculator name, as advertised by the entry point.")
    entry_point: str = Field(description="Where it is found, as 'module:attribute'.", examples=["rigbench_dew.dew:Dew"])
    status: Status = Field(description="loaded: in use; failed: refused (see reason); disabled: by settings.")
    reason: str | None = Field(default=None, description="Why it was refused or disabled; null when loaded.")


class PluginPublic(BaseModel):
    distribution: str = Field(description="Name of the Python distribution that advertises the calculators.")
    version: str = Field(description="Installed version of that distribution.")
    builtin: bool = Field(description="True for rigbench's own calculators.")
    status: Status = Field(
        description="failed when any of its calculators failed, disabled when all are disabled, else loaded."
    )
    calculators: list[PluginCalculatorPublic]


class PluginList(BaseModel):
    items: list[PluginPublic]


def _status(entries: list[CalculatorEntry]) -> Status:
    if any(e.status == "failed" for e in entries):
        return "failed"
    if all(e.status == "disabled" for e in entries):
        return "disabled"
    return "loaded"


def describe(registry: Registry) -> PluginList:
    items = []
    for distribution, entries in registry.distributions().items():
        items.append(PluginPublic(
            distribution=distribution,
            version=entries[0].version,
            builtin=entries[0].builtin,
            status=_status(entries),
            calculators=[
                PluginCalculatorPublic(name=e.name, entry_point=e.target, status=e.status, reason=e.reason)
                for e in entries
            ],
        ))
    return PluginList(items=items)


@router.get("", response_model=PluginList, operation_id="list_plugins", summary="Discovered plugins")
async def list_plugins(request: Request) -> PluginList:
    """Each distribution advertising `rigbench.calculators` entry points, its version and calculators."""
    return describe(request.app.state.registry)
