"""api/http/negotiation.py: Accept header with q-values (RFC 9110 section 12.5.1)."""

from __future__ import annotations

import pytest

from api.http.negotiation import prefers_csv, quality


@pytest.mark.parametrize(("accept", "media", "q"), [
    # Adapted from RFC 9110 section 12.5.1's example, where text/html gets 0.3 and image/jpeg 0.5:
    # the most specific matching range decides.
    ("text/*;q=0.3, text/plain;q=0.7, */*;q=0.5", "text/plain", 0.7),
    ("text/*;q=0.3, text/plain;q=0.7, */*;q=0.5", "text/csv", 0.3),
    ("text/*;q=0.3, text/plain;q=0.7, */*;q=0.5", "application/json", 0.5),
    ("application/json", "text/csv", 0.0),
    ("text/csv;q=bogus", "text/csv", 0.0),
])
def test_quality_follows_the_most_specific_range(accept, media, q):
    assert quality(accept, media) == q


def test_json_is_the_default():
    assert prefers_csv(None) is False and prefers_csv("") is False and prefers_csv("*/*") is False
    assert prefers_csv("text/csv") is True
