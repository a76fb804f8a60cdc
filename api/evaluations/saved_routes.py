"""`/v1/evaluations/saved`: keep a purchase evaluation with its answer, read it back, run it again.

Saving needs a read-write key; reading and re-running follow the saved evaluation's visibility
(a private one of someone else is a 404). The report page of each is at ``report_url``
(api/evaluations/pages.py).
"""

from fastapi import APIRouter, Request
from sqlmodel import Session
from starlette.concurrency import run_in_threadpool
from starlette.responses import Response

from api.clubs.routes import Format, as_csv, wants_csv
from api.deps import Caller, ItemId, Writer
from api.evaluations import rerun, saved
from api.evaluations.csv_table import evaluation_csv
from api.evaluations.request import MAX_FRONT_ROWS
from api.evaluations.routes import CSV_RESPONSE
from api.http import problems

router = APIRouter(prefix="/v1/evaluations/saved", tags=["evaluations"])


def _save(request: Request, caller, body: saved.SavedEvaluationCreate) -> saved.SavedEvaluationPublic:
    state = request.app.state
    components, _ids, spec, result = saved.compute(
        state.engine, caller, body, registry=state.registry,
        maximum=state.settings.max_combinations, max_front_rows=MAX_FRONT_ROWS,
    )
    with Session(state.engine) as session:
        row = saved.save(session, caller, body, components, spec.params, result)
        entries, _current = saved.stored_equipment(session, row, caller)
        return saved.public(row, caller.account.name, entries)


@router.post(
    "", status_code=201, response_model=saved.SavedEvaluationPublic, operation_id="save_evaluation",
    summary="Compute a purchase evaluation and keep it",
    description="The body of `POST /v1/evaluations` plus `name` and `visibility`. The answer is "
    "computed, kept with a copy of every component it was computed from, and returned with the "
    "saved evaluation's `id` and the address of its report page (`report_url`). A public saved "
    "evaluation may use only public stored equipment (as a public rig), and shows its names, specs "
    "and prices as they were at saving; 409 when stored equipment changed while computing.",
    responses=problems.responses(400, 401, 403, 409, 413, 415, 422),
)
async def save_evaluation(body: saved.SavedEvaluationCreate, request: Request, caller: Writer) -> Response:
    public = await run_in_threadpool(_save, request, caller, body)
    return Response(public.model_dump_json(), status_code=201, media_type="application/json",
                    headers={"Location": f"/v1/evaluations/saved/{public.id}"})


def _read(request: Request, caller, item_id: int):
    with Session(request.app.state.engine) as session:
        row, owner = saved.fetch(session, item_id, caller)
        entries, current = saved.stored_equipment(session, row, caller)
    return row, owner, entries, current


@router.get(
    "/{item_id}", response_model=saved.SavedEvaluationPublic, operation_id="get_saved_evaluation",
    summary="A saved evaluation and the answer it had when saved",
    description="`stored_equipment` says how each stored component stands now (unchanged, changed, "
    "retired or gone); the answer is the one kept at saving. With `Accept: text/csv` or "
    "`format=csv`, the answer as the CSV of `POST /v1/evaluations`.",
    responses={**CSV_RESPONSE, **problems.responses(401, 404, 422)},
)
async def get_saved_evaluation(item_id: ItemId, request: Request, caller: Caller, format: Format = None) -> Response:
    row, owner, entries, _current = await run_in_threadpool(_read, request, caller, item_id)
    public = saved.public(row, owner, entries)
    if wants_csv(request, format):
        return as_csv(evaluation_csv(public.result), f"evaluation-{item_id}.csv")
    return Response(public.model_dump_json(), media_type="application/json")


def _rerun(request: Request, caller, item_id: int) -> rerun.Rerun:
    row, _owner, entries, current = _read(request, caller, item_id)
    return rerun.rerun(request.app.state, caller, row, entries, current)[0]


@router.post(
    "/{item_id}/rerun", response_model=rerun.Rerun, operation_id="rerun_saved_evaluation",
    summary="Compute a saved evaluation again with the equipment as it is now",
    description="Stored components are read again (the saved copy stands in for one that is gone "
    "or retired, so indices keep their meaning); the answer now comes with what changed against the "
    "saved one. Nothing is stored: save the request again to keep the new answer.",
    responses=problems.responses(401, 404, 422),
)
async def rerun_saved_evaluation(item_id: ItemId, request: Request, caller: Caller) -> Response:
    result = await run_in_threadpool(_rerun, request, caller, item_id)
    return Response(result.model_dump_json(), media_type="application/json")
