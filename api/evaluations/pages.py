"""The purchase report as a page: `/evaluations/{id}` for a saved evaluation, its charts as SVG
files, and `POST /v1/evaluations/report` for a request computed and drawn at once (what
``rigbench evaluate --url … --report`` asks for).

Server-rendered and script-free, in the club page's style (its club.css plus report.css). The page
sends the club page's Content-Security-Policy (no script; styles and images from this server only).
A saved evaluation private to someone else is a 404, as is one that does not exist.
"""

from __future__ import annotations

from functools import cache
from pathlib import Path

from fastapi import APIRouter, Request
from jinja2 import Environment, PackageLoader, select_autoescape
from sqlmodel import Session
from starlette.concurrency import run_in_threadpool
from starlette.responses import FileResponse, HTMLResponse, Response

from api.clubs import page as club_page
from api.deps import Caller
from api.evaluations import report, rerun, saved, sheets
from api.evaluations.charts import svg_file
from api.evaluations.request import MAX_FRONT_ROWS, EvaluationRequest
from api.http import problems
from api.http.negotiation import quality
from api.http.problems import ApiProblem
from api.schemas import MAX_ID
from api.storage.store import aware

router = APIRouter()

STATIC = Path(__file__).resolve().parent / "static"
SVG_POLICY = "default-src 'none'"
# The self-contained file carries its style inline, so its policy allows inline styles and nothing else.
FILE_POLICY = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; base-uri 'none'"


@cache
def templates() -> Environment:
    return Environment(loader=PackageLoader("api.evaluations", "templates"),
                       autoescape=select_autoescape(default=True), trim_blocks=True, lstrip_blocks=True)


def inline_css() -> str:
    """club.css and report.css, for a report that must stand alone as one file."""
    return "\n".join(path.read_text(encoding="utf-8")
                     for path in (club_page.STATIC / "club.css", STATIC / "report.css"))


def render(spec, components, result, registry, *, title: str, entries=(), standalone: bool = False,
           **meta) -> str:
    """The report as HTML; ``standalone`` inlines the style (one file, nothing fetched)."""
    context = report.context(spec, components, result, registry, entries=entries)
    return templates().get_template("report.html").render(
        title=title, candidates=sheets.components_summary(components),
        inline_css=inline_css() if standalone else None, **context, **meta,
    )


def _entries(stored: list[saved.StoredEntry]) -> list[sheets.Entry]:
    return [sheets.Entry(e.kind, e.index, e.id, e.status, e.changed_fields, e.name) for e in stored]


def _problem_page(request: Request, problem: ApiProblem) -> Response:
    if quality(request.headers.get("accept") or "*/*", "text/html") <= 0:
        raise problem
    html = club_page.templates().get_template("error.html").render(problem=problem)
    return HTMLResponse(html, status_code=problem.status, headers={"Content-Security-Policy": club_page.PAGE_POLICY})


def _item_id(text: str) -> int:
    if not text.isdigit() or not 1 <= int(text) <= MAX_ID:
        raise ApiProblem(404, f"no saved evaluation {text[:40]!r} that you can read")
    return int(text)


def _load(request: Request, caller, item_id: int):
    state = request.app.state
    with Session(state.engine) as session:
        row, owner = saved.fetch(session, item_id, caller)
        stored, _current = saved.stored_equipment(session, row, caller)
    return row, owner, stored


def _page(request: Request, caller, item_id: int) -> str:
    row, owner, stored = _load(request, caller, item_id)
    entries = _entries(stored)
    base = f"/v1/evaluations/saved/{row.id}"
    page = saved.report_path(row.id)
    return render(
        saved.saved_spec(row), saved.saved_components(row), saved.EvaluationResult.model_validate(row.result),
        request.app.state.registry, title=row.name or f"Evaluation {row.id}", entries=entries,
        owner=owner, saved_at=aware(row.created_at).strftime("%Y-%m-%d %H:%M UTC"), visibility=row.visibility,
        rerun=f"{base}/rerun", now_page=f"{page}/now",
        links={"csv": f"{base}?format=csv", "json": base, "tradeoff": f"{page}/trade-off.svg",
               "objectives": f"{page}/objectives.svg"},
    )


def _now_page(request: Request, caller, item_id: int) -> str:
    """The saved evaluation computed again with today's equipment, with what changed."""
    state = request.app.state
    with Session(state.engine) as session:
        row, owner = saved.fetch(session, item_id, caller)
        stored, current = saved.stored_equipment(session, row, caller)
    answer, components, spec = rerun.rerun(state, caller, row, stored, current)
    entries = _entries(stored)
    base, page = f"/v1/evaluations/saved/{row.id}", saved.report_path(row.id)
    return render(
        spec, components, answer.result, state.registry, title=f"{row.name or f'Evaluation {row.id}'}: run again now",
        entries=entries, owner=owner, saved_at=aware(row.created_at).strftime("%Y-%m-%d %H:%M UTC"),
        visibility=row.visibility, saved_page=page,
        changes=report.changes_view(answer.changes, components, state.registry.calculators, answer.result.units),
        rerun=f"{base}/rerun",
    )


@router.get("/evaluations/report.css", include_in_schema=False)
def report_css() -> FileResponse:
    return FileResponse(STATIC / "report.css", media_type="text/css; charset=utf-8",
                        headers={"Cache-Control": "public, max-age=3600"})


@router.get("/evaluations/{item_id}", response_class=HTMLResponse, include_in_schema=False, name="evaluation_report")
async def evaluation_report(item_id: str, request: Request, caller: Caller) -> Response:
    try:
        html = await run_in_threadpool(_page, request, caller, _item_id(item_id))
    except ApiProblem as problem:
        return _problem_page(request, problem)
    return HTMLResponse(html, headers={"Content-Security-Policy": club_page.PAGE_POLICY})


@router.get("/evaluations/{item_id}/now", response_class=HTMLResponse, include_in_schema=False)
async def evaluation_now(item_id: str, request: Request, caller: Caller) -> Response:
    try:
        html = await run_in_threadpool(_now_page, request, caller, _item_id(item_id))
    except ApiProblem as problem:
        return _problem_page(request, problem)
    return HTMLResponse(html, headers={"Content-Security-Policy": club_page.PAGE_POLICY})


def _chart(request: Request, caller, item_id: int, which: str) -> str | None:
    row, _owner, _stored = _load(request, caller, item_id)
    context = report.context(saved.saved_spec(row), saved.saved_components(row),
                             saved.EvaluationResult.model_validate(row.result), request.app.state.registry)
    return context[which]


async def _svg(request: Request, caller, item_id: str, which: str) -> Response:
    try:
        picture = await run_in_threadpool(_chart, request, caller, _item_id(item_id), which)
        if picture is None:
            raise ApiProblem(404, "this evaluation has fewer than three objectives: no parallel-axes chart")
    except ApiProblem as problem:
        return _problem_page(request, problem)
    return Response(svg_file(str(picture)), media_type="image/svg+xml", headers={"Content-Security-Policy": SVG_POLICY})


@router.get("/evaluations/{item_id}/trade-off.svg", include_in_schema=False)
async def tradeoff_picture(item_id: str, request: Request, caller: Caller) -> Response:
    return await _svg(request, caller, item_id, "tradeoff")


@router.get("/evaluations/{item_id}/objectives.svg", include_in_schema=False)
async def objectives_picture(item_id: str, request: Request, caller: Caller) -> Response:
    return await _svg(request, caller, item_id, "parallel")


def _draw(request: Request, caller, body: EvaluationRequest) -> str:
    state = request.app.state
    components, _ids, spec, result = saved.compute(state.engine, caller, body, registry=state.registry,
                                                   maximum=state.settings.max_combinations,
                                                   max_front_rows=MAX_FRONT_ROWS)
    return render(spec, components, result, state.registry, title="Purchase evaluation", standalone=True)


@router.post(
    "/v1/evaluations/report", response_class=HTMLResponse, operation_id="report_evaluation",
    tags=["evaluations"], summary="Sweep combinations and answer with the purchase report as one HTML file",
    description="The body of `POST /v1/evaluations`; the answer is the report page (trade-off chart, a sheet per "
    "pick) as one self-contained HTML file with inline SVG and CSS. Nothing is stored.",
    responses={200: {"description": "The report.", "content": {"text/html": {"schema": {"type": "string"}}}},
               **problems.responses(400, 401, 413, 415, 422)},
)
async def report_evaluation(body: EvaluationRequest, request: Request, caller: Caller) -> HTMLResponse:
    html = await run_in_threadpool(_draw, request, caller, body)
    return HTMLResponse(html, headers={"Content-Security-Policy": FILE_POLICY})
