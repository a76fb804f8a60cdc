"""Choosing JSON or CSV from the Accept header (RFC 9110 section 12.5.1, q-values honoured)."""

from __future__ import annotations

CSV = "text/csv"
JSON = "application/json"


def _ranges(accept: str) -> list[tuple[str, float]]:
    out = []
    for part in accept.split(","):
        pieces = [p.strip() for p in part.split(";")]
        media = pieces[0].lower()
        if not media:
            continue
        q = 1.0
        for param in pieces[1:]:
            key, _, value = param.partition("=")
            if key.strip().lower() == "q":
                try:
                    q = float(value)
                except ValueError:
                    q = 0.0
        out.append((media, q))
    return out


def quality(accept: str, media: str) -> float:
    """The q-value ``accept`` gives ``media``: the most specific matching range wins."""
    kind = media.split("/")[0]
    best, specificity = 0.0, -1
    for candidate, q in _ranges(accept):
        level = 2 if candidate == media else 1 if candidate == f"{kind}/*" else 0 if candidate == "*/*" else -1
        if level > specificity:
            best, specificity = q, level
    return best


def prefers_csv(accept: str | None) -> bool:
    """True when the client ranks CSV above JSON; JSON is the default."""
    if not accept:
        return False
    return quality(accept, CSV) > quality(accept, JSON)
