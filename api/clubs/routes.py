"""`/v1/clubs`: public, read-only views of club accounts, for club web sites and spreadsheets.

No key needed: these views show club profiles and public items. On the equipment view a key of the
club's members or officers shows more (see api.clubs.shelf). Lists
and the comparison answer CSV to ``Accept: text/csv`` or ``?format=csv`` (a plain link cannot set a
header, and spreadsheets import from a URL).
"""

from typing import Annotated, Literal

from fastapi import APIRouter, Path, Query, Request
from sqlmodel import Session
from starlette.responses import Response

from api.clubs import fit
from api.clubs import queries as clubs
from api.clubs.cache import serve_cached
from api.clubs.csv_table import clubs_csv, equipment_csv, rigs_csv
from api.clubs.schemas import ClubComparison, ClubEquipment, ClubList, ClubPublic, ClubRigList, ClubRigPublic
from api.comparisons.csv_table import comparison_csv
from api.deps import Caller, RegistryDep, SessionDep, SettingsDep
from api.http import problems
from api.http.negotiation import prefers_csv
from api.schemas import HANDLE_PATTERN, MAX_ID
from api.settings import Settings
from calculators.builtin.target_fit import DEFAULT_TARGET

router = APIRouter(prefix="/v1/clubs", tags=["clubs"])

ClubName = Annotated[str, Path(pattern=HANDLE_PATTERN, description="The club's handle, e.g. 'lakeside-astro'.")]
Format = Annotated[
    Literal["json", "csv"] | None,
    Query(description="Overrides the Accept header: 'csv' for a spreadsheet, 'json' for JSON."),
]
Limit = Annotated[int, Query(ge=1, le=10_000, description="Page size (at most the server's max_page_size).")]
Offset = Annotated[int, Query(ge=0, le=MAX_ID)]


def csv_response(description: str) -> dict:
    return {200: {"description": description, "content": {"text/csv": {"schema": {"type": "string"}}}}}


def wants_csv(request: Request, format: str | None) -> bool:
    if format is not None:
        return format == "csv"
    return prefers_csv(request.headers.get("accept"))


def as_csv(text: str, filename: str) -> Response:
    return Response(text, media_type="text/csv; charset=utf-8",
                    headers={"Content-Disposition": f'inline; filename="{filename}"'})


def check_limit(limit: int, settings: Settings) -> None:
    if limit > settings.max_page_size:
        raise clubs.invalid("limit", f"must be at most {settings.max_page_size}")


@router.get(
    "", response_model=ClubList, operation_id="list_clubs", summary="List the club accounts",
    responses={**csv_response("The clubs; as CSV, one row per club."), **problems.responses(422)},
)
def list_clubs(
    request: Request, session: SessionDep, settings: SettingsDep, limit: Limit = 50, offset: Offset = 0,
    format: Format = None,
):
    check_limit(limit, settings)
    items, total = clubs.list_clubs(session, limit, offset)
    if wants_csv(request, format):
        return as_csv(clubs_csv(items), "clubs.csv")
    return ClubList(items=items, total=total, limit=limit, offset=offset)


@router.get(
    "/{name}", response_model=ClubPublic, operation_id="get_club", summary="A club's public profile",
    responses=problems.responses(404, 422),
)
def get_club(name: ClubName, session: SessionDep) -> ClubPublic:
    return clubs.profile(clubs.find_club(session, name))


@router.get(
    "/{name}/equipment", response_model=ClubEquipment, operation_id="get_club_equipment",
    summary="A club's equipment, each item available, on loan (with its due date) or retired",
    description="Without a key, or with the key of someone outside the club: the public items in use, "
    "never who borrowed them. The club's members also see members-only and retired items; its officers "
    "see everything the club owns, the borrowers and overdue loans.",
    responses={**csv_response("The equipment; as CSV, one row per item, its kind in the first column."),
               **problems.responses(404, 422)},
)
def get_club_equipment(
    name: ClubName, request: Request, session: SessionDep, settings: SettingsDep, caller: Caller,
    format: Format = None,
):
    found = clubs.equipment(session, clubs.find_club(session, name), settings.max_page_size, caller)
    if wants_csv(request, format):
        return as_csv(equipment_csv(found), f"{name}-equipment.csv")
    return found


@router.get(
    "/{name}/rigs", response_model=ClubRigList, operation_id="list_club_rigs", summary="A club's public rigs",
    description="One page of the club's public rigs, oldest first, each with its compatibility verdict in "
    "words (`fit`).",
    responses={**csv_response("The rigs; as CSV, one row per rig with its components' ids and names and "
                              "its compatibility verdict in words (column `fit`)."),
               **problems.responses(404, 422)},
)
def list_club_rigs(
    name: ClubName, request: Request, session: SessionDep, settings: SettingsDep, registry: RegistryDep,
    limit: Limit = 50, offset: Offset = 0, format: Format = None,
):
    check_limit(limit, settings)
    items, total = clubs.rigs(session, clubs.find_club(session, name), limit, offset)
    valid = [rig for rig in items if not rig.invalid]
    # One vectorised pass of one calculator over at most max_page_size rigs.
    fits = fit.verdicts(registry, [rig.resolved for rig in valid])
    if wants_csv(request, format):
        return as_csv(rigs_csv(valid, fits), f"{name}-rigs.csv")
    by_id = {rig.id: verdict for rig, verdict in zip(valid, fits)}
    # Constructed, not validated: a rig stored invalid is listed as stored (api.equipment.readable).
    listed = [ClubRigPublic.model_construct(_fields_set=rig.model_fields_set | {"fit"}, **dict(rig),
                                            fit=by_id.get(rig.id)) for rig in items]
    return ClubRigList(items=listed, total=total, limit=limit, offset=offset)


#: The club comparison's own query parameters (the site overrides come on top).
COMPARISON_QUERY = ("baseline", "target", "format")


@router.get(
    "/{name}/comparison", response_model=ClubComparison, operation_id="compare_club_rigs",
    summary="Every calculator over a club's public rigs",
    description="The club's public rigs, oldest first (at most the server's club_page_max_rigs, 100 by "
    "default; `rigs_total` says how many there are), through every loaded calculator. The answer "
    "carries an ETag; send it back in If-None-Match for a 304 while the club is unchanged. `baseline` is "
    "the id of the rig the relative figures refer to (default: the oldest); `target` the deep-sky "
    "object placed in each field (OpenNGC designation or common name). The club's default site fills "
    "the calculators' site params (the answer's `site` says which values); the query parameters named "
    "like a site's fields override them, and any other query parameter is refused (422).",
    responses={**csv_response("The comparison; as CSV, one row per rig and one column per calculator "
                              "output, the unit in each header."),
               **problems.responses(404, 422)},
)
async def compare_club_rigs(
    name: ClubName,
    request: Request,
    settings: SettingsDep,
    registry: RegistryDep,
    baseline: Annotated[int | None, Query(ge=1, le=MAX_ID, description="Id of one of the club's public rigs.")] = None,
    target: Annotated[str, Query(min_length=1, max_length=40, description="e.g. 'M 33', 'NGC 891'.")] = DEFAULT_TARGET,
    format: Format = None,
    seeing_fwhm_arcsec: Annotated[float | None, Query(gt=0, le=20, description="Overrides the site's seeing.")] = None,
    sky_brightness_mag_arcsec2: Annotated[float | None, Query(ge=10, le=25, description="Overrides the site's sky brightness.")] = None,
    night_temperature_c: Annotated[float | None, Query(ge=-40, le=50, description="Overrides the site's night temperature.")] = None,
    relative_humidity_percent: Annotated[float | None, Query(gt=0, le=100, description="Overrides the site's humidity.")] = None,
    latitude_deg: Annotated[float | None, Query(ge=-90, le=90, description="Overrides the site's latitude.")] = None,
    elevation_m: Annotated[float | None, Query(ge=-500, le=9000, description="Overrides the site's elevation.")] = None,
):
    def build() -> Response:
        with Session(request.app.state.engine) as session:
            result = clubs.comparison(
                session, registry, clubs.find_club(session, name), baseline_id=baseline, target=target,
                max_rigs=min(settings.club_page_max_rigs, settings.max_rigs_per_comparison),
                query=dict(request.query_params), known=COMPARISON_QUERY,
            )
        if wants_csv(request, format):
            return as_csv(comparison_csv(result), f"{name}-comparison.csv")
        return Response(result.model_dump_json(), media_type="application/json")

    # Built once per club state and query (ETag, 304 on If-None-Match): api.clubs.cache.
    return await serve_cached(request, name, build)
