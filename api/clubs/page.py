"""`/clubs/{name}`: a club's equipment, rigs, comparison table and pictures as one HTML page.

Server-rendered and script-free, so it reads the same with JavaScript off, in a text browser or in
an iframe on the club's own site (the page shows the snippet). The form that picks the baseline rig
and the deep-sky object is a plain GET form. The two pictures are also served alone as SVG files.

The page sends its own Content-Security-Policy: no script at all, styles and images only from this
server, and embedding allowed from any site (it shows only public data and changes nothing).
"""

from functools import cache
from pathlib import Path
from typing import Annotated
from urllib.parse import urlencode

from fastapi import APIRouter, Query, Request
from jinja2 import Environment, PackageLoader, select_autoescape
from markupsafe import Markup
from sqlmodel import Session
from starlette.responses import FileResponse, HTMLResponse, Response

from api.clubs import fit
from api.clubs import queries as clubs
from api.clubs.cache import serve_cached
from api.clubs import view as club_view
from api.http.negotiation import quality
from api.http.problems import ApiProblem
from api.schemas import MAX_ID
from api.sites.conditions import OVERRIDES
from calculators.builtin.catalogue import CREDIT
from calculators.builtin.integration_time import SUN_CAUTION
from calculators.builtin.target_fit import DEFAULT_TARGET

router = APIRouter(include_in_schema=False)

STATIC = Path(__file__).resolve().parent / "static"
# The page's own files, by name; nothing else under api/static is served.
ASSETS = {"club.css": "text/css; charset=utf-8", "club-icon.svg": "image/svg+xml"}

PAGE_POLICY = (
    "default-src 'none'; style-src 'self'; img-src 'self'; form-action 'self'; base-uri 'none'; "
    "frame-ancestors *"
)
SVG_POLICY = "default-src 'none'"

# The page's own cautions; the calculators' cautions follow the comparison.
#: Mains, batteries and cables at a pier or in an observatory (also in README, "Cautions").
ELECTRICAL_CAUTION = (
    "Electricity outdoors: mains power at a pier or in an observatory needs residual-current (RCD/GFCI) "
    "protection, outdoor-rated sockets, leads and power supplies kept off the wet ground, and an "
    "installation to the local electrical code by a licensed electrician. Charge batteries with the "
    "charger made for them, away from anything that burns and never unattended, and do not use a "
    "swollen or damaged one: they can catch fire. Tape down or cover cables, which trip people in the dark."
)

CAUTIONS = (
    "Heavy payloads and counterweights can crush hands and feet and topple a mount. Stay within the "
    "mount maker's rated capacity, balance with the counterweights secured and the shaft's safety stop "
    "in place, and keep people clear of the counterweight's swing.",
    "Wind loads a long tube far beyond its weight. Piers, footings, roll-off roofs and domes are "
    "structures: follow the manufacturers' instructions, local building codes and a qualified "
    "professional, not a figure from this page.",
    SUN_CAUTION + " Look at the Sun only through a filter made for it, fitted securely over the front "
    "of the instrument, and cap or remove the finder.",
    ELECTRICAL_CAUTION,
)

#: How the page names a site's values (field -> label, unit).
SITE_FIELDS = {
    "seeing_fwhm_arcsec": ("seeing (FWHM)", "″"),
    "sky_brightness_mag_arcsec2": ("sky brightness", " mag/arcsec²"),
    "night_temperature_c": ("night temperature", " °C"),
    "relative_humidity_percent": ("humidity", " %"),
    "latitude_deg": ("latitude", "°"),
    "elevation_m": ("elevation", " m"),
}

# Page inputs are read as text and checked here, so a bad one gets a page that says what is wrong.
BaselineText = Annotated[str | None, Query(description="Id of the baseline rig.")]
TargetText = Annotated[str, Query(description="Deep-sky object, e.g. 'M 33'.")]
EmbedText = Annotated[str | None, Query(description="'1' for the compact look inside an iframe.")]


@cache
def templates() -> Environment:
    return Environment(
        loader=PackageLoader("api.clubs", "templates"), autoescape=select_autoescape(default=True),
        trim_blocks=True, lstrip_blocks=True,
    )


def _html(template: str, status: int = 200, **context) -> HTMLResponse:
    response = HTMLResponse(templates().get_template(template).render(**context), status_code=status)
    response.headers["Content-Security-Policy"] = PAGE_POLICY
    return response


def _baseline(text: str | None) -> int | None:
    if text is None or not text.strip():
        return None
    if not text.strip().isdigit() or not 1 <= int(text) <= MAX_ID:
        raise clubs.invalid("baseline", f"{text[:40]!r} is not a rig id")
    return int(text)


#: The page's own query parameters; a site's fields (e.g. seeing_fwhm_arcsec) override its site.
PAGE_QUERY = ("baseline", "target", "embed")


def _gather(request: Request, name: str, baseline: str | None, target: str):
    state = request.app.state
    with Session(state.engine) as session:
        club = clubs.find_club(session, name)
        # The page shows at most RIGBENCH_CLUB_PAGE_MAX_RIGS rigs, the oldest first (it says so).
        shown = min(state.settings.club_page_max_rigs, state.settings.max_rigs_per_comparison)
        result = clubs.comparison(
            session, state.registry, club, baseline_id=_baseline(baseline), target=target,
            max_rigs=shown, query=dict(request.query_params), known=PAGE_QUERY,
        )
        equipment = clubs.equipment(session, club, state.settings.max_page_size)
        rigs, _total = clubs.rigs(session, club, shown, 0)
    # A rig whose stored spec no longer validates is left off the page (the JSON lists mark it).
    return club, result, equipment, [rig for rig in rigs if not rig.invalid]


def _problem_page(request: Request, problem: ApiProblem) -> HTMLResponse:
    """A problem as a page for browsers; clients that do not take HTML get the problem document."""
    accept = request.headers.get("accept") or "*/*"
    if quality(accept, "text/html") <= 0:
        raise problem
    return _html("error.html", problem.status, problem=problem)


@router.get("/clubs/{name}", response_class=HTMLResponse, name="club_page")
async def club_page(
    name: str, request: Request, baseline: BaselineText = None, target: TargetText = DEFAULT_TARGET,
    embed: EmbedText = None,
) -> Response:
    return await serve_cached(request, name, lambda: _club_page(name, request, baseline, target, embed))


def _club_page(name: str, request: Request, baseline: str | None, target: str, embed: str | None) -> HTMLResponse:
    try:
        club, result, equipment, rigs = _gather(request, name[:100], baseline, target)
    except ApiProblem as problem:
        return _problem_page(request, problem)
    page_url = str(request.url_for("club_page", name=club.name))
    chosen = {"baseline": result.baseline_rig_id, "target": result.target} if result.rigs else {}
    chosen.update({k: request.query_params[k] for k in OVERRIDES if k in request.query_params})
    query = "?" + urlencode(chosen) if chosen else ""
    resolved = {rig.id: rig.resolved for rig in rigs}
    fits = fit.from_result(result.results.get(fit.CALCULATOR), [resolved.get(r.id) for r in result.rigs])
    # A no-break space keeps each length and its unit on one line in a narrow column.
    fits = [text.replace(" mm", "\u00a0mm") if text else text for text in fits]
    return _html(
        "club.html",
        club=club, comparison=result, embed=(embed or "").lower() in {"1", "true", "yes"}, page_url=page_url,
        table=club_view.comparison_table(result, fits),
        figures=club_view.all_figures(result, counts=club_view.counts(request.app.state.registry)),
        fields=Markup(club_view.fields_picture(result) or ""), bars=Markup(club_view.bars_picture(result) or ""),
        equipment=club_view.equipment_tables(equipment), complete=equipment.complete,
        rigs=club_view.rigs_table(rigs, {r.id: text for r, text in zip(result.rigs, fits)}),
        cautions=CAUTIONS, calculator_cautions=club_view.cautions(result),
        rig_cautions=club_view.rig_cautions(result),
        credit=CREDIT, query=query, site_fields=SITE_FIELDS, api=f"/v1/clubs/{club.name}",
    )


def _svg(request: Request, name: str, baseline: str | None, target: str, draw) -> Response:
    try:
        _club, result, _equipment, _rigs = _gather(request, name[:100], baseline, target)
    except ApiProblem as problem:
        return _problem_page(request, problem)
    picture = draw(result)
    if picture is None:
        return _problem_page(request, ApiProblem(404, f"club {name!r} has no public rig to draw"))
    return Response('<?xml version="1.0" encoding="UTF-8"?>\n' + picture, media_type="image/svg+xml",
                    headers={"Content-Security-Policy": SVG_POLICY})


@router.get("/clubs/{name}/fields.svg", name="club_fields_picture")
async def club_fields_picture(
    name: str, request: Request, baseline: BaselineText = None, target: TargetText = DEFAULT_TARGET,
) -> Response:
    return await serve_cached(
        request, name, lambda: _svg(request, name, baseline, target, club_view.fields_picture))


@router.get("/clubs/{name}/bars.svg", name="club_bars_picture")
async def club_bars_picture(
    name: str, request: Request, baseline: BaselineText = None, target: TargetText = DEFAULT_TARGET,
) -> Response:
    return await serve_cached(
        request, name, lambda: _svg(request, name, baseline, target, club_view.bars_picture))


@router.get("/static/{asset}", name="club_asset")
def club_asset(asset: str) -> FileResponse:
    if asset not in ASSETS:
        raise ApiProblem(404, f"no file named {asset[:60]!r}")
    return FileResponse(STATIC / asset, media_type=ASSETS[asset], headers={"Cache-Control": "public, max-age=3600"})
