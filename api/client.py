"""A thin client for scripts and notebooks, on httpx.

>>> from api.client import RigbenchClient
>>> with RigbenchClient("http://127.0.0.1:8000", key="rb_…") as rb:           # doctest: +SKIP
...     scope = rb.create("telescopes", {"aperture_mm": "8 in", "focal_length_mm": 1000})
...     rb.compare([{"id": 1}, {"id": 2}], calculators=["light_grasp"])

Every error answer raises :class:`ProblemError` carrying the server's problem document.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import httpx

KINDS = ("telescopes", "cameras", "modifiers", "mounts", "rigs")


class ProblemError(Exception):
    """The service answered with an error; ``problem`` is its RFC 9457 document."""

    def __init__(self, status: int, problem: dict[str, Any]):
        self.status = status
        self.problem = problem
        fields = "; ".join(f"{e['field']}: {e['message']}" for e in problem.get("errors", []))
        super().__init__(f"{status} {problem.get('title', '')}: {problem.get('detail', '')}"
                         + (f" [{fields}]" if fields else ""))


class RigbenchClient:
    """Calls the rigbench API. Pass ``http=`` to reuse an existing ``httpx.Client`` (tests do)."""

    def __init__(self, base_url: str = "http://127.0.0.1:8000", key: str | None = None, *,
                 http: httpx.Client | None = None, timeout: float = 30.0):
        headers = {"Authorization": f"Bearer {key}"} if key else {}
        self._owned = http is None
        self.http = http or httpx.Client(base_url=base_url, timeout=timeout)
        self.headers = headers

    def __enter__(self) -> RigbenchClient:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        if self._owned:
            self.http.close()

    def _call(self, method: str, url: str, **kw: Any) -> httpx.Response:
        response = self.http.request(method, url, headers={**self.headers, **kw.pop("headers", {})}, **kw)
        if response.status_code >= 400:
            try:
                problem = response.json()
            except ValueError:
                problem = {"title": response.reason_phrase, "detail": response.text[:200]}
            raise ProblemError(response.status_code, problem)
        return response

    # --- stored items -----------------------------------------------------------------------------

    def create(self, kind: str, body: Mapping[str, Any]) -> dict[str, Any]:
        return self._call("POST", f"/v1/{_kind(kind)}", json=dict(body)).json()

    def get(self, kind: str, item_id: int) -> dict[str, Any]:
        return self._call("GET", f"/v1/{_kind(kind)}/{item_id}").json()

    def list(self, kind: str, **filters: Any) -> dict[str, Any]:
        """One page: ``filters`` are owner, visibility, limit, offset."""
        return self._call("GET", f"/v1/{_kind(kind)}", params=filters).json()

    def update(self, kind: str, item_id: int, changes: Mapping[str, Any], *, version: int | None = None) -> dict[str, Any]:
        """Change some fields; with ``version`` the change applies only if nobody changed it since (412)."""
        headers = {"If-Match": f'"{version}"'} if version is not None else {}
        return self._call("PATCH", f"/v1/{_kind(kind)}/{item_id}", json=dict(changes), headers=headers).json()

    def replace(self, kind: str, item_id: int, body: Mapping[str, Any], *, version: int | None = None) -> dict[str, Any]:
        headers = {"If-Match": f'"{version}"'} if version is not None else {}
        return self._call("PUT", f"/v1/{_kind(kind)}/{item_id}", json=dict(body), headers=headers).json()

    def delete(self, kind: str, item_id: int) -> None:
        self._call("DELETE", f"/v1/{_kind(kind)}/{item_id}")

    # --- calculators and comparisons --------------------------------------------------------------

    def calculators(self) -> list[dict[str, Any]]:
        return self._call("GET", "/v1/calculators").json()["items"]

    def calculator(self, name: str) -> dict[str, Any]:
        return self._call("GET", f"/v1/calculators/{name}").json()

    def compare(self, rigs: Sequence[Mapping[str, Any]], calculators: Sequence[str] | None = None,
                baseline: int = 0, params: Mapping[str, Mapping[str, Any]] | None = None) -> dict[str, Any]:
        """Rigs inline or as ``{"id": N}``; returns the comparison (see the README for its shape)."""
        return self._call("POST", "/v1/comparisons", json=_comparison(rigs, calculators, baseline, params)).json()

    def compare_csv(self, rigs: Sequence[Mapping[str, Any]], calculators: Sequence[str] | None = None,
                    baseline: int = 0, params: Mapping[str, Mapping[str, Any]] | None = None) -> str:
        """The same comparison as CSV text, one row per rig."""
        return self._call("POST", "/v1/comparisons", json=_comparison(rigs, calculators, baseline, params),
                          headers={"Accept": "text/csv"}).text

    def evaluate(self, request: Mapping[str, Any]) -> dict[str, Any]:
        """A purchase evaluation: candidate lists (inline or ``{"id": N}``), constraints, objectives;
        returns the counts, the Pareto front and the top rows (see the README for the shape)."""
        return self._call("POST", "/v1/evaluations", json=dict(request)).json()


def _kind(kind: str) -> str:
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {', '.join(KINDS)}, not {kind!r}")
    return kind


def _comparison(rigs, calculators, baseline, params) -> dict[str, Any]:
    body: dict[str, Any] = {"rigs": [dict(r) for r in rigs], "baseline": baseline}
    if calculators is not None:
        body["calculators"] = list(calculators)
    if params:
        body["params"] = {k: dict(v) for k, v in params.items()}
    return body
