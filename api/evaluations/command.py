"""``rigbench evaluate REQUEST.json``: a purchase evaluation from a script or a terminal.

Without ``--url`` the sweep runs in this process with the installed calculators; every component
must then be given inline (stored ``{"id": N}`` references need a server). With ``--url`` the request
goes to ``POST /v1/evaluations`` on that server through :class:`api.client.RigbenchClient`, and
``--key`` lets it read the caller's private equipment. Either way the answer is printed as a table of
the Pareto front (or whole, as JSON, with ``--json``). A sweep computed in more than one chunk shows
a progress bar on standard error.

Exit status: 0 answered, 2 the request was refused (the reason on standard error, naming the
field), 1 the server could not be reached or failed.
"""

from __future__ import annotations

import argparse
import io
import json
import sys
from collections.abc import Mapping
from pathlib import Path
from typing import Any, TextIO

from api.evaluations import report_file
from api.settings import Settings

KINDS = ("telescope", "camera", "train", "mount")
LISTS = ("telescopes", "cameras", "trains", "mounts", "modifiers", "eyepieces")
LABEL_WIDTH = 28


class Refused(Exception):
    """The request cannot be answered; the message names the field."""


def add_evaluate(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "evaluate", help="sweep every combination of candidate equipment and print the Pareto front",
        description="Sweep every combination of the candidate telescopes, cameras, trains and "
        "mounts in REQUEST (the body of POST /v1/evaluations, see README) and print the Pareto "
        "front. Computed here unless --url names a server.",
    )
    parser.add_argument("request", help="JSON file holding the request; '-' reads standard input")
    parser.add_argument("--url", help="send the request to this server (e.g. http://127.0.0.1:8000) "
                        "instead of computing here; needed for stored {\"id\": N} equipment")
    parser.add_argument("--key", help="API key, with --url, to use your private stored equipment")
    parser.add_argument("--json", action="store_true", help="print the whole answer as JSON")
    parser.add_argument("--rows", type=int, default=50, metavar="N",
                        help="most front rows in the table (default 50)")
    parser.add_argument("--chunk-rows", type=int, metavar="N",
                        help="computing here: most combinations held in memory at once (default "
                        "about a million, some hundreds of MB); smaller bounds memory")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")
    report_file.add_report_option(parser)
    parser.set_defaults(handler=run_evaluate)


def run_evaluate(args: argparse.Namespace, settings: Settings) -> int:
    try:
        body = _read(args.request)
        if args.url:
            answer = _remote(body, args.url, args.key)
        else:
            answer = _local(body, settings, args.chunk_rows, show_progress=not args.quiet)
    except Refused as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    except _Unavailable as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 1
    if args.report:
        try:
            report_file.write_report(args, body, answer, settings)
        except report_file.ReportFailed as exc:
            print(f"error: {exc}", file=sys.stderr)
            return 2
    if args.json:
        json.dump(answer, sys.stdout, indent=2, ensure_ascii=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(front_table(answer, body, max_rows=args.rows))
    return 0


class _Unavailable(Exception):
    """The server could not be reached or failed (not the request's fault)."""


def _read(source: str) -> dict[str, Any]:
    try:
        text = sys.stdin.read() if source == "-" else Path(source).read_text(encoding="utf-8")
    except OSError as exc:
        raise Refused(f"cannot read {source}: {exc.strerror or exc}") from None
    try:
        body = json.loads(text)
    except json.JSONDecodeError as exc:
        raise Refused(f"{source} is not valid JSON: {exc.msg} (line {exc.lineno}, column {exc.colno})") from None
    if not isinstance(body, dict):
        raise Refused(f"{source}: the request must be a JSON object")
    return body


def _remote(body: dict[str, Any], url: str, key: str | None) -> dict[str, Any]:
    import httpx

    from api.client import ProblemError, RigbenchClient

    try:
        with RigbenchClient(url, key=key, timeout=600.0) as client:
            return client.evaluate(body)
    except ProblemError as exc:
        if exc.status >= 500:
            raise _Unavailable(str(exc)) from None
        raise Refused(_problem_text(exc.problem, exc.status)) from None
    except httpx.HTTPError as exc:
        raise _Unavailable(f"cannot reach {url}: {exc}") from None


def _problem_text(problem: Mapping[str, Any], status: int) -> str:
    lines = [f"{status} {problem.get('title', '')}: {problem.get('detail', '')}"]
    lines += [f"  {e['field']}: {e['message']}" for e in problem.get("errors", [])]
    return "\n".join(lines)


def _local(body: dict[str, Any], settings: Settings, chunk_rows: int | None, *,
           show_progress: bool) -> dict[str, Any]:
    from pydantic import ValidationError

    from api.evaluations.request import MAX_FRONT_ROWS
    from api.http.problems import field_path
    from api.tuning import keep_freed_memory
    from calculators.evaluation_schemas import InlineEvaluationRequest
    from calculators.sweep import DEFAULT_CHUNK_ROWS, EvaluationError, evaluate_spec
    from plugins.registry import load_registry

    def is_ref(entry: Any) -> bool:
        return isinstance(entry, dict) and "id" in entry and set(entry) <= {"id", "owned"}

    stored = [f"{name}.{i}" for name in LISTS for i, entry in enumerate(body.get(name) or ())
              if is_ref(entry)]
    stored += [f"trains.{i}.{j}" for i, train in enumerate(body.get("trains") or ())
               if isinstance(train, list) for j, entry in enumerate(train) if is_ref(entry)]
    if stored:
        raise Refused(f"{', '.join(stored[:5])}: stored equipment ({{\"id\": N}}) needs a server; "
                      "give --url (and --key for private items), or give the component inline")
    keep_freed_memory()  # as a server process does: large numpy temporaries reuse freed blocks
    try:
        spec = InlineEvaluationRequest.model_validate(body)
    except ValidationError as exc:
        errors = exc.errors(include_url=False)
        raise Refused(f"the request has {len(errors)} invalid field(s):\n" + "\n".join(
            f"  {field_path(e['loc'])}: {e['msg']}" for e in errors)) from None
    chunk_rows = DEFAULT_CHUNK_ROWS if chunk_rows is None else chunk_rows
    if chunk_rows < 1:
        raise Refused(f"--chunk-rows: must be at least 1, got {chunk_rows}")
    registry = load_registry(disabled=settings.disabled_plugins)
    bar = ProgressBar(sys.stderr) if show_progress else None
    try:
        result = evaluate_spec(
            spec.telescopes, spec.cameras, spec.trains, spec.mounts, spec,
            calculators=registry.calculators, max_combinations=settings.max_combinations,
            chunk_rows=chunk_rows, progress=bar, max_front_rows=MAX_FRONT_ROWS,
        )
    except EvaluationError as exc:
        where = field_path(exc.loc) if exc.loc else "request"
        raise Refused(f"{where}: {exc}") from None
    finally:
        if bar is not None:
            bar.close()
    return result.model_dump(mode="json")


class ProgressBar:
    """``progress(done, total)`` for the sweep: a ``rich`` progress bar on ``stream``, redrawn in place
    on a terminal, written once when done elsewhere. Silent for a sweep done in one step (nothing to
    wait for)."""

    def __init__(self, stream: TextIO, width: int = 30):
        from rich.console import Console
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

        self.progress = Progress(
            TextColumn("sweeping"), BarColumn(bar_width=width), MofNCompleteColumn(), TextColumn("steps"),
            TimeElapsedColumn(), console=Console(file=stream, highlight=False), auto_refresh=False,
        )
        self.task = None

    def __call__(self, done: int, total: int) -> None:
        if total <= 1:
            return
        if self.task is None:
            self.task = self.progress.add_task("sweep", total=total)
            self.progress.start()
        self.progress.update(self.task, completed=done, total=total)
        self.progress.refresh()
        if done >= total:
            self.progress.stop()

    def close(self) -> None:
        """Leave the terminal tidy when the sweep stops early (a refusal half-way)."""
        if self.task is not None and not self.progress.finished:
            self.progress.stop()


# --- the table ------------------------------------------------------------------------------------

def front_table(answer: Mapping[str, Any], body: Mapping[str, Any], *, max_rows: int = 50) -> str:
    """The front as a ``rich`` table, figures headed by their labels and units as the club page shows
    them (api.display), components named as in the request; then each row's own cautions and a short
    summary."""
    from rich import box
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    from api.display import header, number_text, unit_text

    front, keys = answer["front"], list(answer["units"])
    labels = answer.get("labels") or {}
    lines = [
        f"{answer['evaluated']:,} combinations, {answer['feasible']:,} feasible, "
        f"{len(front):,} on the Pareto front"
    ]
    if not front:
        lines.append("No combination meets every constraint.")
    else:
        shown = front[:max(0, max_rows)]
        table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False)
        # Text, not markup: "[arcsec]" and names people type are shown as they are.
        table.add_column("#", justify="right")
        for kind in KINDS:
            table.add_column(kind)
        for key in keys:
            table.add_column(Text(header(labels.get(key, key), unit_text(answer["units"][key]))), justify="right")
        table.add_column("score", justify="right")
        for n, row in enumerate(shown, 1):
            cells = [str(n), *(_label(body, kind, row) for kind in KINDS),
                     *(number_text(row["values"].get(k)) for k in keys), number_text(row["score"])]
            table.add_row(*map(Text, cells))
        buffer = io.StringIO()
        Console(file=buffer, width=400, color_system=None, highlight=False).print(table)
        lines += ["", *(line.rstrip() for line in buffer.getvalue().splitlines())]
        if len(front) > len(shown):
            lines.append(f"… and {len(front) - len(shown):,} more on the front (--rows N shows more, "
                         "--json prints the whole answer)")
        flagged = [(n, text) for n, row in enumerate(shown, 1) for text in row.get("cautions") or ()]
        if flagged:
            lines += ["", "CAUTION, for these rows in particular:"]
            lines += [f"  #{n}: {text}" for n, text in flagged]
        best = answer["top"][0] if answer["top"] else None
        if best is not None:
            lines += ["", "Best by score (lower is better): " + ", ".join(_label(body, kind, best) for kind in KINDS)
                      + f" (score {number_text(best['score'])})"]
    for calculator, cautions in answer.get("cautions", {}).items():
        lines += [f"Caution ({calculator}): {text}" for text in cautions]
    return "\n".join(lines) + "\n"


def _label(body: Mapping[str, Any], kind: str, row: Mapping[str, Any]) -> str:
    """A component as the request gave it: its name, its stored id, or 'none' for null."""
    index = row["indices"][kind]
    if kind == "camera" and index is None:  # a visual combination: its eyepiece stands there
        kind, index = "eyepiece", row["indices"].get("eyepiece")
        if index is None:
            return "none (the train's eyepiece)"
    entries = body.get(f"{kind}s") or [None]
    if kind == "train" and "trains" not in body and body.get("modifiers"):  # the old name
        entries = [[] if m is None else [m] for m in body["modifiers"]]
    entry = entries[index] if index < len(entries) else None
    if kind == "train":
        parts = [] if not isinstance(entry, list) else [
            f"id {e['id']}" if isinstance(e, dict) and set(e) == {"id"} else
            (e.get("name") or e.get("kind", "?")) if isinstance(e, dict) else "?" for e in entry]
        text = " + ".join(parts) or "none"
    elif entry is None:
        text = "none"
    elif set(entry) == {"id"}:
        text = f"id {entry['id']}"
    else:
        text = entry.get("name") or f"{kind} {index}"
    binning = row["indices"].get("binning") or 1
    suffix = f" ({binning}×{binning} binned)" if kind == "camera" and binning > 1 else ""
    if len(text) + len(suffix) > LABEL_WIDTH:
        text = text[:LABEL_WIDTH - 1 - len(suffix)] + "…"
    return text + suffix
