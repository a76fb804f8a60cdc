"""`POST /v1/evaluations`: sweep every combination of candidate equipment under constraints;
answer with the counts, the Pareto front and the best rows by score; JSON or CSV.

An ``async def`` route: stored ids are read and the sweep runs in the threadpool, so the event
loop stays free for other requests while a large product is computed.
"""

from fastapi import APIRouter, Request
from starlette.concurrency import run_in_threadpool
from starlette.responses import Response

from api.deps import Caller
from api.evaluations.csv_table import evaluation_csv
from api.evaluations.request import (
    MAX_FRONT_ROWS,
    EvaluationRequest,
    as_problem,
    check_size,
    inline_components,
    needs_database,
    resolve_request,
    sizes,
    with_site,
)
from api.schemas import Ref
from api.sites.conditions import read_site
from api.http import problems
from api.http.budget import budget_for, run_heavy
from api.http.ratelimit import client_address, rate_limits
from api.http.negotiation import prefers_csv
from calculators.evaluation_schemas import EvaluationResult
from calculators.sweep import EvaluationError, evaluate_spec

router = APIRouter(prefix="/v1/evaluations", tags=["evaluations"])

CSV_RESPONSE = {
    200: {
        "description": "The evaluation; with `Accept: text/csv`, a table with one line per row of "
        "the front, then of the top, then the baseline: set, rank, indices, stored ids, one column "
        "per value (the unit in its header) and the score.",
        "content": {"text/csv": {"schema": {"type": "string"}}},
    }
}


@router.post(
    "", response_model=EvaluationResult, operation_id="evaluate_combinations",
    summary="Sweep combinations of candidate equipment",
    description="Every combination of the telescopes, cameras (at each binning factor) or "
    "eyepieces, trains and mounts given is "
    "computed with the calculators named in `constraints` and `objectives`; the answer counts "
    "them, lists every Pareto-optimal feasible combination (`front`) and the `limit` best by score "
    "(`top`). Products above the service's maximum (`RIGBENCH_MAX_COMBINATIONS`) are refused.",
    responses={**CSV_RESPONSE, **problems.responses(400, 401, 413, 415, 422)},
)
async def create_evaluation(body: EvaluationRequest, request: Request, caller: Caller) -> Response:
    # app.state is read directly, as in the comparison route: no extra dependency hops.
    state = request.app.state
    maximum = state.settings.max_combinations
    check_size(body, maximum)
    await rate_limits(request).count_compute(caller.key_id if caller else None, client_address(request))
    if needs_database(body):
        components, ids, eyepieces = await run_in_threadpool(resolve_request, state.engine, caller, body)
    else:
        components, ids, eyepieces = inline_components(body), None, list(body.eyepieces)
    site, site_id = body.site, None
    if isinstance(site, Ref):
        site, site_id = await run_in_threadpool(read_site, state.engine, caller, site)
    body, used = with_site(body, site, site_id, state.registry.calculators)
    try:
        budget = budget_for(request, caller is not None)
        result = await run_heavy(
            request, budget, evaluate_spec, *components, body, check=budget.check,
            calculators=state.registry.calculators, ids=ids, max_combinations=maximum,
            max_front_rows=MAX_FRONT_ROWS, eyepieces=eyepieces,
        )
    except EvaluationError as exc:
        raise as_problem(exc, sizes(body)) from None
    if used is not None:
        result.site = used
    if prefers_csv(request.headers.get("accept")):
        return Response(
            evaluation_csv(result), media_type="text/csv; charset=utf-8",
            headers={"Content-Disposition": 'inline; filename="evaluation.csv"'},
        )
    # Serialised here rather than by FastAPI, which would validate the (possibly thousands of)
    # rows against the response model once more; the OpenAPI document still takes the shape
    # from response_model.
    return Response(result.model_dump_json(), media_type="application/json")
