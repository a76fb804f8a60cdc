"""`POST /v1/comparisons`: run calculators over inline or stored rigs; JSON or CSV.

An ``async def`` route: an inline comparison touches neither the database nor the threadpool; stored
ids are read in the threadpool, and large batches are computed there so the event loop stays free.
"""

from fastapi import APIRouter, Request
from starlette.concurrency import run_in_threadpool
from starlette.responses import Response

from api.comparisons.csv_table import comparison_csv
from api.comparisons.resolve import baseline_after_skips, check_request, inline_rigs, needs_database, resolve_rigs
from api.deps import Caller
from api.http import problems
from api.http.budget import budget_for, run_heavy
from api.http.ratelimit import client_address, rate_limits
from api.http.negotiation import prefers_csv
from api.schemas import ComparisonRequest, Ref
from api.sites.conditions import read_site
from plugins.compare import comparison_tree
from plugins.results import Comparison, comparison_json

router = APIRouter(prefix="/v1/comparisons", tags=["comparisons"])

# Above this many rigs the computation moves off the event loop.
THREADPOOL_RIGS = 64

CSV_RESPONSE = {
    200: {
        "description": "The comparison; with `Accept: text/csv`, a table with one row per rig and one "
        "column per calculator output, the unit in each header.",
        "content": {"text/csv": {"schema": {"type": "string"}}},
    }
}


@router.post(
    "", response_model=Comparison, operation_id="compare_rigs", summary="Compare rigs",
    responses={**CSV_RESPONSE, **problems.responses(400, 401, 413, 415, 422)},
)
async def create_comparison(body: ComparisonRequest, request: Request, caller: Caller) -> Comparison | Response:
    # app.state is read directly: each extra dependency costs measurable time on this hot route.
    state = request.app.state
    registry, settings, engine = state.registry, state.settings, state.engine
    names = check_request(body, registry, settings.max_rigs_per_comparison)
    skipped = []
    if needs_database(body):
        rigs, ids, skipped = await run_in_threadpool(resolve_rigs, engine, caller, body)
    else:
        rigs, ids = inline_rigs(body), None
    site, site_id = body.site, None
    if isinstance(site, Ref):
        site, site_id = await run_in_threadpool(read_site, engine, caller, site)
    args = (rigs, names, baseline_after_skips(body.baseline, skipped), body.params)
    kwargs = {"registry": registry, "ids": ids, "site": site, "site_id": site_id}
    # A third-party calculator may wait out its time budget in a worker thread: never on the loop.
    third_party = registry.runs_third_party(names)
    if len(rigs) > THREADPOOL_RIGS:  # a heavy one: rate-limited, and under a heavy-request slot
        await rate_limits(request).count_compute(caller.key_id if caller else None, client_address(request))
        budget = budget_for(request, caller is not None)
        tree = await run_heavy(request, budget, comparison_tree, *args, **kwargs)
    elif third_party:
        tree = await run_in_threadpool(comparison_tree, *args, **kwargs)
    else:
        tree = comparison_tree(*args, **kwargs)
    if prefers_csv(request.headers.get("accept")):
        result = Comparison.model_validate(tree)
        result.skipped = skipped
        return Response(
            comparison_csv(result), media_type="text/csv; charset=utf-8",
            headers={"Content-Disposition": 'inline; filename="comparison.csv"'},
        )
    # Serialised here rather than by FastAPI, which would validate the result against the
    # response model once more; the OpenAPI document still takes the shape from response_model.
    # Built-in calculators' trees are written without a validation at all (plugins.results).
    return Response(comparison_json(tree, skipped, validate=third_party), media_type="application/json")
