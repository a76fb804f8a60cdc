"""`/clubs/{name}/members-area`: the club's members' view — sign in with a key, see what you may borrow
and your loans, and ask to borrow with a plain form (no JavaScript).

Sign-in: the key is posted once in a form; the server checks it and keeps only the account's and the
key's ids in Starlette's session cookie, which is signed (itsdangerous), expires
(``RIGBENCH_SESSION_MAX_AGE_S``), is HTTP-only and SameSite=Lax, and is sent only under ``/clubs``.
Each request checks the key again, so revoking it ends the sign-in. Every form carries a CSRF token
kept in the session (compared in constant time). A wrong key counts against the failed-key limit (429 once used up); a
borrow request counts against the write limits like any API write.
"""

from __future__ import annotations

import hmac
import secrets
from datetime import date, timedelta
from typing import Any

from fastapi import APIRouter, Request
from pydantic import ValidationError
from sqlmodel import Session
from starlette.concurrency import run_in_threadpool
from starlette.responses import HTMLResponse, RedirectResponse, Response

from api.accounts.keys import Principal, authenticate
from api.clubs import loans, shelf
from api.clubs import queries as clubs
from api.clubs import view as club_view
from api.clubs.operation_schemas import LoanAsk
from api.clubs.page import PAGE_POLICY, templates
from api.clubs.roles import BELONGS, Standing, standing
from api.clubs.schemas import SHELF
from api.http.problems import ApiProblem
from api.http.ratelimit import client_address, rate_limits
from api.storage.models import Account, ApiKey, KeyScope

router = APIRouter(include_in_schema=False)

BORROWERS = (Standing.officer, Standing.member)
KINDS = {"telescopes", "cameras", "modifiers", "mounts"}


def _html(template: str, status: int = 200, **context: Any) -> HTMLResponse:
    response = HTMLResponse(templates().get_template(template).render(**context), status_code=status)
    response.headers["Content-Security-Policy"] = PAGE_POLICY.replace("frame-ancestors *", "frame-ancestors 'none'")
    response.headers["Cache-Control"] = "no-store"
    return response


def csrf_token(request: Request) -> str:
    token = request.session.get("csrf")
    if not token:
        token = request.session["csrf"] = secrets.token_urlsafe(32)
    return token


def _csrf_ok(request: Request, sent: Any) -> bool:
    token = request.session.get("csrf")
    return bool(token) and isinstance(sent, str) and hmac.compare_digest(token, sent)


def _signed_in(session: Session, request: Request, club: Account) -> Principal | None:
    """The principal the session names, if its key is still live and it is for this club."""
    who = request.session.get("who") or {}
    if who.get("club") != club.name:
        return None
    key = session.get(ApiKey, who.get("key_id"))
    if key is None or key.revoked_at is not None or key.account_id != who.get("account_id"):
        request.session.pop("who", None)
        return None
    account = session.get(Account, key.account_id)
    return Principal(account=account, scope=KeyScope(key.scope), key_id=key.id)


def _view(request: Request, name: str, notice: str = "", problem: ApiProblem | None = None, status: int = 200):
    state = request.app.state
    with Session(state.engine) as session:
        club = clubs.find_club(session, name)
        principal = _signed_in(session, request, club)
        context: dict[str, Any] = {"club": club, "csrf": csrf_token(request), "notice": notice, "problem": problem,
                                   "page": str(request.url_for("club_page", name=club.name))}
        if principal is None:
            return _html("members.html", status, signed_in=None, **context)
        found = standing(session, club, principal)
        lists, _complete = shelf.items(session, club, clubs.EQUIPMENT, state.settings.max_page_size, principal, SHELF)
        tables = [(path, resource.label, [item for item in lists[path] if item.availability.value != "retired"])
                  for path, resource in clubs.EQUIPMENT]
        mine, _total = loans.listing(session, club, principal.account.id, None, state.settings.max_page_size, 0)
        tomorrow = loans.today() + timedelta(days=1)
        return _html(
            "members.html", status, signed_in=principal.account, role=found.value, tables=tables,
            loans=list(reversed(loans.present(session, club, mine))), can_borrow=found in BORROWERS,
            availability=club_view.availability_text, start=tomorrow.isoformat(),
            due=(tomorrow + timedelta(days=3)).isoformat(), **context,
        )


def _page_or_problem(request: Request, name: str, **kwargs: Any) -> Response:
    try:
        return _view(request, name[:100], **kwargs)
    except ApiProblem as problem:
        return _html("error.html", problem.status, problem=problem)


@router.get("/clubs/{name}/members-area", response_class=HTMLResponse, name="club_members_page")
async def members_area(name: str, request: Request) -> Response:
    asked = request.query_params.get("asked", "")
    notice = "Your request is with the club's officers." if asked.isdigit() else ""
    return await run_in_threadpool(_page_or_problem, request, name, notice=notice)


def _back(request: Request, name: str, **query: str) -> RedirectResponse:
    url = request.url_for("club_members_page", name=name).include_query_params(**query) if query else \
        request.url_for("club_members_page", name=name)
    return RedirectResponse(str(url), status_code=303)


def _refused(request: Request, name: str, problem: ApiProblem) -> Response:
    return _page_or_problem(request, name, problem=problem, status=problem.status)


@router.post("/clubs/{name}/sign-in", name="club_sign_in")
async def sign_in(name: str, request: Request) -> Response:
    form = await request.form()
    if not _csrf_ok(request, form.get("csrf")):
        return await run_in_threadpool(_refused, request, name, ApiProblem(403, "the form has expired; please try again"))
    limits, address = rate_limits(request), client_address(request)
    key = str(form.get("key") or "").strip()

    def check() -> Response | None:
        with Session(request.app.state.engine) as session:
            club = clubs.find_club(session, name[:100])
            principal = authenticate(session, key) if key else None
            if principal is None:
                return None
            if standing(session, club, principal) not in BELONGS:
                raise ApiProblem(403, f"{principal.account.name!r} is not a member of {club.name!r}")
            # A new session on sign-in (no fixation): a fresh CSRF token too.
            request.session.clear()
            request.session["who"] = {"club": club.name, "account_id": principal.account.id, "key_id": principal.key_id}
            request.session["csrf"] = secrets.token_urlsafe(32)
            return _back(request, club.name)

    try:
        done = await run_in_threadpool(check)
    except ApiProblem as problem:
        return await run_in_threadpool(_refused, request, name, problem)
    if done is None:
        # Failed keys are counted per address (429 past the limit); a valid key is never refused.
        try:
            await limits.count_failed_auth(address)
        except ApiProblem as problem:
            return await run_in_threadpool(_refused, request, name, problem)
        return await run_in_threadpool(_refused, request, name, ApiProblem(401, "that key is unknown or revoked"))
    return done


@router.post("/clubs/{name}/sign-out", name="club_sign_out")
async def sign_out(name: str, request: Request) -> Response:
    form = await request.form()
    if _csrf_ok(request, form.get("csrf")):
        request.session.clear()
    return _back(request, name[:100])


def _parse_day(text: Any, field: str) -> date:
    try:
        return date.fromisoformat(str(text))
    except ValueError:
        raise clubs.invalid(field, f"{str(text)[:20]!r} is not a date such as 2026-12-24") from None


@router.post("/clubs/{name}/borrow", name="club_borrow")
async def borrow(name: str, request: Request) -> Response:
    form = await request.form()
    if not _csrf_ok(request, form.get("csrf")):
        return await run_in_threadpool(_refused, request, name, ApiProblem(403, "the form has expired; please try again"))

    def who() -> Principal:
        with Session(request.app.state.engine) as session:
            club = clubs.find_club(session, name[:100])
            principal = _signed_in(session, request, club)
            if principal is None:
                raise ApiProblem(401, "sign in first")
            if not principal.can_write:
                raise ApiProblem(403, "this key is read-only; sign in with a read-write key to ask to borrow")
            return principal

    try:
        principal = await run_in_threadpool(who)
        await rate_limits(request).count_write(principal.key_id, client_address(request))
        kind, item_id = str(form.get("kind", "")), str(form.get("id", ""))
        if kind not in KINDS or not item_id.isdigit():
            raise clubs.invalid("item", "pick an item from the list")
        try:
            ask = LoanAsk(item={"kind": kind, "id": int(item_id)}, start=_parse_day(form.get("start"), "start"),
                          due=_parse_day(form.get("due"), "due"), note=str(form.get("note", ""))[:500])
        except ValidationError as exc:
            raise ApiProblem(422, "; ".join(e["msg"] for e in exc.errors()), title="Invalid input") from None

        def work() -> int:
            with Session(request.app.state.engine) as session:
                club = clubs.find_club(session, name[:100])
                if standing(session, club, principal) not in BORROWERS:
                    raise ApiProblem(403, "only the club's members and officers may ask to borrow")
                account = session.get(Account, principal.account.id)
                return loans.ask(session, club, ask.item, ask.start, ask.due, ask.note, account).id

        loan_id = await run_in_threadpool(work)
    except ApiProblem as problem:
        return await run_in_threadpool(_refused, request, name, problem)
    return _back(request, name[:100], asked=str(loan_id))


