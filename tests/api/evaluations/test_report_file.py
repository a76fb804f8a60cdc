"""api/evaluations/report_file.py: `rigbench evaluate REQUEST.json --report FILE` writes the report as
one self-contained page (inline style and SVG, nothing to fetch), computed here or on a server."""

from __future__ import annotations

import re

from test_evaluate_command import REQUEST, engine_answer, request_file, server  # noqa: F401  (fixtures)

from api.cli import main
from api.client import RigbenchClient


def assert_self_contained(html: str) -> None:
    assert "<style>" in html and "<script" not in html
    assert not re.search(r'<link[^>]+stylesheet', html)
    assert not re.search(r'(src|href)="(https?:)?//', html)  # nothing from another host
    assert '<svg id="trade-off"' in html


def test_computed_here_the_file_draws_the_engines_front_and_a_sheet_per_pick(request_file, tmp_path, capsys):
    out = tmp_path / "report.html"
    assert main(["evaluate", request_file(), "--report", str(out), "--quiet"]) == 0
    assert "on the Pareto front" in capsys.readouterr().out  # the table is still printed
    html = out.read_text(encoding="utf-8")
    assert_self_contained(html)
    expected = engine_answer(REQUEST)
    drawn = re.findall(r'data-front="true" [^>]*data-indices="([\d,]+)"', html)
    # data-indices: the four indices and the binning factor
    assert sorted(drawn) == sorted(",".join(str(r["indices"][k]) for k in ("telescope", "camera", "train", "mount",
                                                                           "binning"))
                                   for r in expected["front"])
    assert html.count('<article class="sheet"') == len(expected["top"])


def test_an_unwritable_report_path_exits_2_naming_it(request_file, tmp_path, capsys):
    target = tmp_path / "no-such-folder" / "report.html"
    assert main(["evaluate", request_file(), "--report", str(target), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: --report: cannot write") and str(target) in err


def test_on_a_server_the_report_shows_stored_equipment_read_with_the_key(server, make_account, request_file,
                                                                            tmp_path, capsys):
    alice = make_account("alice")
    with RigbenchClient(server, key=alice.key) as rb:
        scope = rb.create("telescopes", {**REQUEST["telescopes"][1], "name": "alice's own refractor"})
    stored = {**REQUEST, "telescopes": [REQUEST["telescopes"][0], {"id": scope["id"]}, REQUEST["telescopes"][2]]}
    out = tmp_path / "remote.html"
    assert main(["evaluate", request_file(stored), "--url", server, "--key", alice.key, "--report", str(out)]) == 0
    html = out.read_text(encoding="utf-8")
    assert_self_contained(html)
    assert "alice&#39;s own refractor" in html
    assert html.count('data-front="true"') == len(engine_answer(REQUEST)["front"])
    # Without the key the server refuses the private telescope, and no file is written.
    missing = tmp_path / "refused.html"
    assert main(["evaluate", request_file(stored), "--url", server, "--report", str(missing)]) == 2
    assert not missing.exists()
    capsys.readouterr()
