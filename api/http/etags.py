"""Entity tags for stored items: the strong tag ``"<version>"``.

A strong tag, because RFC 9110 (section 13.1.1) compares ``If-Match`` strongly: a weak tag
(``W/"3"``) never matches there, so a client must send back the tag exactly as it received it.
"""

from __future__ import annotations

import re
from typing import Annotated

from fastapi import Header
from starlette.responses import Response

from api.http.problems import ApiProblem

_TAG = re.compile(r'\s*(W/)?"([^"]*)"\s*')


def etag(version: int) -> str:
    return f'"{version}"'


def matches(if_match: str, version: int) -> bool:
    """True when an If-Match header value names ``version`` (or is ``*``)."""
    if if_match.strip() == "*":
        return True
    for part in if_match.split(","):
        found = _TAG.fullmatch(part)
        if found and not found.group(1) and found.group(2) == str(version):
            return True
    return False


def require_match(if_match: str | None, version: int, what: str) -> None:
    if if_match is not None and not matches(if_match, version):
        raise ApiProblem(
            412, f"{what} is at version {version} (ETag {etag(version)}), not {if_match.strip()}; "
            "fetch it again and re-apply your change",
            title="Precondition Failed", current_version=version,
        )


IfMatch = Annotated[
    str | None,
    Header(
        alias="If-Match", max_length=1000,
        description='The ETag from your last read (e.g. "3"); the change applies only if the item is '
        "still at that version (412 otherwise).",
    ),
]


def none_match(if_none_match: str | None, tag: str) -> bool:
    """True when an If-None-Match header value names ``tag`` (weakly, as RFC 9110 section 13.1.2
    compares it) or is ``*``: the client's copy is current, answer 304."""
    if not if_none_match:
        return False
    if if_none_match.strip() == "*":
        return True
    wanted = _TAG.fullmatch(tag)
    for part in if_none_match.split(","):
        found = _TAG.fullmatch(part)
        if found and wanted and found.group(2) == wanted.group(2):
            return True
    return False


def not_modified(tag: str, headers: dict[str, str] | None = None) -> Response:
    return Response(status_code=304, headers={"ETag": tag, **(headers or {})})
