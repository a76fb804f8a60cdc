"""api/evaluations/command.py: `rigbench evaluate REQUEST.json`, in-process and against a real server.

The in-process answer is checked against the engine called directly; the server answer against the
in-process one (same request, same calculators, so the same table) and, for stored equipment,
against the same equipment given inline.
"""

from __future__ import annotations

import io
import json
import re
import os
import socket
import subprocess
import sys
import time

import httpx
import pytest
from rigbench_testing import CAMERA, MODIFIER, MOUNT, TELESCOPE

from api.cli import main
from api.client import RigbenchClient
from api.display import number_text
from api.evaluations.command import ProgressBar, front_table
from calculators.evaluation_schemas import InlineEvaluationRequest
from calculators.sweep import evaluate_spec
from plugins.registry import load_registry

REQUEST = {
    "telescopes": [
        {**TELESCOPE, "mass_kg": 9.0, "price": {"amount": 600, "currency": "EUR"}},
        {"name": "80 mm f/6 refractor", "design": "refractor", "aperture_mm": 80, "focal_length_mm": 480,
         "mass_kg": 3.0, "price": {"amount": 450, "currency": "EUR"}},
        {"name": "150 mm f/8 newtonian", "design": "newtonian", "aperture_mm": 150, "focal_length_mm": 1200,
         "obstruction_mm": 45, "mass_kg": 7.0, "price": {"amount": 380, "currency": "EUR"}},
    ],
    "cameras": [
        {**CAMERA, "mass_kg": 0.7, "price": {"amount": 1400, "currency": "EUR"}},
        {"name": "small-pixel camera", "pixel_size_um": 2.5, "width_px": 3000, "height_px": 2000,
         "mass_kg": 0.4, "price": {"amount": 500, "currency": "EUR"}},
    ],
    "trains": [[], [{**MODIFIER, "mass_kg": 0.3, "price": {"amount": 250, "currency": "EUR"}}]],
    "mounts": [{**MOUNT, "mass_kg": 18, "price": {"amount": 1500, "currency": "EUR"}},
               {"name": "light mount 10 kg", "capacity_kg": 10, "mass_kg": 8,
                "price": {"amount": 700, "currency": "EUR"}}],
    "constraints": {"sampling.pixel_scale_arcsec": {"min": 0.6, "max": 2.5},
                    "payload.capacity_fraction": {"max": 0.8}},
    "objectives": {"speed.time_factor_per_arcsec2": "min", "cost.total_price": "min"},
}


def engine_answer(body):
    spec = InlineEvaluationRequest.model_validate(body)
    return evaluate_spec(spec.telescopes, spec.cameras, spec.trains, spec.mounts, spec,
                         calculators=load_registry().calculators).model_dump(mode="json")


@pytest.fixture
def request_file(tmp_path):
    def write(body=REQUEST):
        path = tmp_path / "request.json"
        path.write_text(json.dumps(body), encoding="utf-8")
        return str(path)

    return write


def table_rows(text):
    """The data rows of the printed table (after the rule under the headers, up to a blank line or the
    "… more" note)."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.strip() and set(line.strip()) <= {"─", " "})
    rows = []
    for line in lines[start + 1:]:
        if not line.strip() or line.startswith("…"):
            break
        rows.append(line)
    return rows


def test_in_process_prints_the_engine_s_front_as_a_table(request_file, capsys):
    assert main(["evaluate", request_file()]) == 0
    out = capsys.readouterr().out
    expected = engine_answer(REQUEST)
    assert out.splitlines()[0] == (f"{expected['evaluated']} combinations, {expected['feasible']} feasible, "
                                   f"{len(expected['front'])} on the Pareto front")
    # Headed by the labels and units the club page shows (api/display.py).
    assert "Price [EUR]" in out and "Pixel scale [arcsec]" in out
    rows = table_rows(out)
    assert len(rows) == len(expected["front"])
    for line, row in zip(rows, expected["front"]):
        names = [REQUEST[f"{kind}s"][row["indices"][kind]] for kind in ("telescope", "camera", "mount")]
        for entry in names:
            assert (entry or {"name": "none"})["name"] in line
        train = REQUEST["trains"][row["indices"]["train"]]
        assert (" + ".join(e["name"] for e in train) or "none") in line
        assert number_text(row["values"]["cost.total_price"]) in line
    # The payload calculator's safety cautions go with any answer that used it.
    assert "Caution (payload)" in out


def test_json_prints_the_whole_answer(request_file, capsys):
    assert main(["evaluate", request_file(), "--json"]) == 0
    assert json.loads(capsys.readouterr().out) == engine_answer(REQUEST)


def test_a_sweep_in_several_chunks_shows_progress_and_the_same_answer(request_file, capsys):
    # 2 x 2 x 2 = 8 combinations per telescope: chunks of one telescope, three of them, each computed
    # twice (counts and front, then the top rows): six steps.
    assert main(["evaluate", request_file(), "--chunk-rows", "8", "--json"]) == 0
    captured = capsys.readouterr()
    assert json.loads(captured.out) == engine_answer(REQUEST)
    # Not a terminal: the bar is written once, when the sweep is done.
    assert "sweeping" in captured.err and "6/6 steps" in captured.err
    assert main(["evaluate", request_file(), "--chunk-rows", "8", "--quiet"]) == 0
    assert capsys.readouterr().err == ""


def test_the_progress_bar_redraws_in_place_on_a_terminal():
    class Terminal(io.StringIO):
        def isatty(self):
            return True

    stream = Terminal()
    bar = ProgressBar(stream, width=8)
    bar(1, 1)  # a one-step sweep shows nothing
    assert stream.getvalue() == ""
    bar(1, 4)
    first = stream.getvalue()
    bar(4, 4)
    text = stream.getvalue()
    plain = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]")  # terminal control codes (colour, cursor)
    assert "1/4 steps" in plain.sub("", first) and "4/4 steps" in plain.sub("", text)
    assert "\x1b[2K" in text[len(first):]  # the line is cleared and redrawn in place, not appended
    bar.close()


def test_a_sweep_refused_half_way_leaves_the_bar_closed():
    stream = io.StringIO()
    bar = ProgressBar(stream, width=8)
    bar(1, 4)
    bar.close()
    assert "1/4 steps" in stream.getvalue() and bar.progress.live.is_started is False


@pytest.mark.parametrize(("body", "words"), [
    ({**REQUEST, "telescopes": [{"id": 4}]}, ["telescopes.0", "--url"]),
    ({**REQUEST, "cameras": []}, ["cameras"]),
    ({**REQUEST, "objectives": {"no_such.output": "min"}}, ["objectives.no_such.output"]),
    ({**REQUEST, "constraints": {"sampling.pixel_scale_arcsec": {"min": 3, "max": 1}}},
     ["constraints.sampling.pixel_scale_arcsec", "greater than max"]),
    ([1, 2], ["JSON object"]),
])
def test_a_refused_request_exits_2_naming_the_field(request_file, capsys, body, words):
    assert main(["evaluate", request_file(body)]) == 2
    err = capsys.readouterr().err
    for word in words:
        assert word in err


def test_unreadable_files_and_bad_json_exit_2(tmp_path, capsys):
    assert main(["evaluate", str(tmp_path / "missing.json")]) == 2
    assert "cannot read" in capsys.readouterr().err
    broken = tmp_path / "broken.json"
    broken.write_text('{"telescopes": [', encoding="utf-8")
    assert main(["evaluate", str(broken)]) == 2
    assert "not valid JSON" in capsys.readouterr().err


def test_the_product_limit_setting_applies_in_process(request_file, capsys, monkeypatch):
    monkeypatch.setenv("RIGBENCH_MAX_COMBINATIONS", "10")
    assert main(["evaluate", request_file()]) == 2
    assert "= 24 combinations (telescopes × cameras × trains × mounts), more than the maximum of 10" \
        in capsys.readouterr().err


def test_the_front_table_names_stored_equipment_by_id_and_cuts_long_fronts():
    answer = {
        "evaluated": 3, "feasible": 3, "units": {"x.y": "mm"}, "cautions": {},
        "front": [{"indices": {"telescope": i, "camera": 0, "train": 0, "mount": 0},
                   "values": {"x.y": float(i)}, "score": None} for i in range(3)],
        "top": [],
    }
    body = {"telescopes": [{"id": 7}, {"aperture_mm": 1}, {"name": "n" * 40}], "cameras": [{"id": 2}]}
    text = front_table(answer, body, max_rows=2)
    rows = table_rows(text)
    assert len(rows) == 2 and "id 7" in rows[0] and "id 2" in rows[0] and "none" in rows[0]
    assert "telescope 1" in rows[1]
    assert "… and 1 more on the front" in text
    assert "x.y [mm]" in text  # an answer without labels (an older server) is headed by its keys


def test_the_front_table_uses_labels_and_puts_each_row_s_cautions_under_it():
    answer = {
        "evaluated": 2, "feasible": 2, "units": {"payload.payload_kg": "kg", "cost.price_per_cm2": "EUR/cm^2"},
        "labels": {"payload.payload_kg": "Payload", "cost.price_per_cm2": "Price per aperture area"},
        "cautions": {},
        "front": [{"indices": {"telescope": i, "camera": 0, "train": 0, "mount": 0},
                   "values": {"payload.payload_kg": 10.0 + 20 * i, "cost.price_per_cm2": 304.79999999999995},
                   "score": 0.0, "cautions": ["Over the mount's rating: …"] if i else []} for i in range(2)],
        "top": [],
    }
    text = front_table(answer, {"telescopes": [{"name": "a"}, {"name": "b"}], "cameras": [{"name": "c"}]})
    assert "Payload [kg]" in text and "Price per aperture area [EUR/cm²]" in text
    assert "305" in text and "304.79999999999995" not in text
    assert "CAUTION, for these rows in particular:\n  #2: Over the mount's rating: …" in text


# --- against a real server ------------------------------------------------------------------------

def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture
def server(app, database_url, tmp_path):
    """`rigbench serve` in a subprocess on 127.0.0.1, on this test's database."""
    port = _free_port()
    script = os.path.join(os.path.dirname(sys.executable), "rigbench")
    env = {**os.environ, "RIGBENCH_DATABASE_URL": database_url, "RIGBENCH_DATA_DIR": str(tmp_path / "data")}
    process = subprocess.Popen([script, "serve", "--port", str(port), "--log-level", "warning"],
                               stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True, env=env)
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while True:
            try:
                if httpx.get(f"{base}/healthz").status_code == 200:
                    break
            except httpx.TransportError:
                pass
            if process.poll() is not None or time.monotonic() > deadline:
                pytest.fail(f"the server did not start: {process.stderr.read() if process.poll() is not None else ''}")
            time.sleep(0.1)
        yield base
    finally:
        process.terminate()
        process.wait(timeout=20)


def test_against_a_server_prints_the_same_table(server, request_file, capsys):
    assert main(["evaluate", request_file()]) == 0
    here = capsys.readouterr().out
    assert main(["evaluate", request_file(), "--url", server]) == 0
    there = capsys.readouterr()
    assert there.out == here and there.err == ""
    assert main(["evaluate", request_file(), "--url", server, "--json"]) == 0
    assert json.loads(capsys.readouterr().out) == engine_answer(REQUEST)


def test_against_a_server_stored_equipment_needs_the_key(server, make_account, request_file, capsys):
    alice = make_account("alice")
    with RigbenchClient(server, key=alice.key) as rb:
        scope = rb.create("telescopes", REQUEST["telescopes"][1])  # private by default
    stored = {**REQUEST, "telescopes": [REQUEST["telescopes"][0], {"id": scope["id"]}, REQUEST["telescopes"][2]]}
    assert main(["evaluate", request_file(stored), "--url", server, "--json", "--key", alice.key]) == 0
    answer = json.loads(capsys.readouterr().out)
    inline = engine_answer(REQUEST)
    assert [(r["indices"], r["values"]) for r in answer["front"]] == [(r["indices"], r["values"]) for r in inline["front"]]
    assert {r["ids"]["telescope"] for r in answer["front"] if r["indices"]["telescope"] == 1} <= {scope["id"]}
    assert main(["evaluate", request_file(stored), "--url", server]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: 422") and "telescopes.1.id" in err


def test_the_front_table_names_a_visual_rows_eyepiece_and_a_binned_rows_factor():
    answer = {
        "evaluated": 2, "feasible": 2, "units": {"x.y": ""}, "cautions": {}, "top": [],
        "front": [{"indices": {"telescope": 0, "camera": None, "train": 0, "mount": 0, "binning": None,
                               "eyepiece": 0}, "values": {"x.y": 1.0}, "score": None},
                  {"indices": {"telescope": 0, "camera": 0, "train": 0, "mount": 0, "binning": 2,
                               "eyepiece": None}, "values": {"x.y": 2.0}, "score": None}],
    }
    body = {"telescopes": [{"name": "scope"}], "cameras": [{"name": "cam"}],
            "eyepieces": [{"name": "25 mm eyepiece"}]}
    rows = table_rows(front_table(answer, body))
    assert "25 mm eyepiece" in rows[0] and "cam (2×2 binned)" in rows[1]
