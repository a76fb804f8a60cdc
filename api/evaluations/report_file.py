"""``rigbench evaluate REQUEST.json --report report.html``: the purchase report as one file.

The same page a saved evaluation has (api/evaluations/pages.py), with its style inline and its
charts as inline SVG, so the file opens anywhere with nothing fetched. Computed here, it is drawn
from the answer just computed; with ``--url`` the server draws it (``POST /v1/evaluations/report``,
which sweeps the request once more).
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from api.settings import Settings


class ReportFailed(Exception):
    """The report could not be made or written; the message says why."""


def add_report_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--report", metavar="FILE",
                        help="also write the purchase report (trade-off chart, a sheet per pick) to FILE as "
                        "one self-contained HTML page")


def _write(path: str, html: str) -> None:
    try:
        Path(path).write_text(html, encoding="utf-8")
    except OSError as exc:
        raise ReportFailed(f"--report: cannot write {path}: {exc.strerror or exc}") from None


def local_report(body: dict[str, Any], answer: dict[str, Any], settings: Settings) -> str:
    from api.evaluations.pages import render
    from calculators.evaluation_schemas import EvaluationResult, InlineEvaluationRequest
    from plugins.registry import load_registry

    spec = InlineEvaluationRequest.model_validate(body)  # already validated by the sweep
    components = (spec.telescopes, spec.cameras, spec.trains, spec.mounts, spec.eyepieces)
    return render(spec, components, EvaluationResult.model_validate(answer),
                  load_registry(disabled=settings.disabled_plugins), title="Purchase evaluation", standalone=True)


def remote_report(body: dict[str, Any], url: str, key: str | None) -> str:
    import httpx

    headers = {"Authorization": f"Bearer {key}"} if key else {}
    try:
        response = httpx.post(url.rstrip("/") + "/v1/evaluations/report", json=body, headers=headers, timeout=600)
    except httpx.HTTPError as exc:
        raise ReportFailed(f"--report: cannot reach {url}: {exc}") from None
    if response.status_code != 200:
        raise ReportFailed(f"--report: the server answered {response.status_code}: {response.text[:300]}")
    return response.text


def write_report(args: argparse.Namespace, body: dict[str, Any], answer: dict[str, Any], settings: Settings) -> None:
    """Called by ``rigbench evaluate`` once the answer is in."""
    html = remote_report(body, args.url, args.key) if args.url else local_report(body, answer, settings)
    _write(args.report, html)
