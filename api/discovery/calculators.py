"""`/v1/calculators`: what each loaded calculator computes, in which units, from which sources."""

from typing import Annotated

from fastapi import APIRouter, Path

from api.deps import RegistryDep
from api.http import problems
from api.http.problems import ApiProblem
from api.schemas import CalculatorList, CalculatorPublic, Origin, OutputPublic
from plugins.registry import Registry

router = APIRouter(prefix="/v1/calculators", tags=["calculators"])

CalculatorName = Annotated[str, Path(pattern=r"^[a-z][a-z0-9_]{0,62}$", description="Calculator name.")]


def describe(registry: Registry, name: str) -> CalculatorPublic:
    calculator = registry.get(name)
    entry = registry.origin(name)
    return CalculatorPublic(
        name=calculator.name,
        version=calculator.version,
        summary=calculator.summary,
        outputs=[
            OutputPublic(name=o.name, label=o.shown_label, unit=o.unit, description=o.description,
                         kind=o.kind, integer=o.integer, nullable=o.nullable, relative=o.relative)
            for o in calculator.outputs
        ],
        params_schema=calculator.Params.model_json_schema(),
        sources=list(calculator.sources),
        cautions=list(calculator.cautions),
        origin=Origin(builtin=entry.builtin, distribution=entry.distribution, version=entry.version),
    )


@router.get("", response_model=CalculatorList, operation_id="list_calculators", summary="Loaded calculators")
async def list_calculators(registry: RegistryDep) -> CalculatorList:
    return CalculatorList(items=[describe(registry, name) for name in registry.calculators])


@router.get("/{name}", response_model=CalculatorPublic, operation_id="get_calculator",
            summary="One calculator", responses=problems.responses(404, 422))
async def get_calculator(name: CalculatorName, registry: RegistryDep) -> CalculatorPublic:
    if name not in registry.calculators:
        raise ApiProblem(404, str(registry.unknown(name)))
    return describe(registry, name)
