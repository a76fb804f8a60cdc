"""README's "Imaging trains" worked example and sweep answer as the service really gives them.

A documentation check (the request in README is posted to the real app and its pasted answer compared),
plus the backfocus arithmetic README writes out by hand: spacer = backfocus + t·(1 − 1/n) − lengths
behind − flange, the plate shift from Smith, *Modern Optical Engineering*, 4th ed., 2008, §2.6
(from memory). The compatibility calculator's own reference tests are in tests/calculators/.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import pytest

README = Path(__file__).resolve().parents[2] / "README.md"


def section() -> str:
    text = README.read_text(encoding="utf-8")
    return text[text.index("**Will it fit? A worked example.**"):text.index("**Renamed, accepted for one release:**")]


def json_blocks(text: str) -> list:
    return [json.loads(block) for block in re.findall(r"```json\n(.*?)```", text, flags=re.S)]


def request(text: str) -> dict:
    return json.loads(re.search(r"-d '(\{.*?\})'", text, flags=re.S).group(1))


def test_the_worked_example_answers_as_readme_shows(client):
    text = section()
    body = request(text)
    response = client.post("/v1/comparisons", json=body)
    assert response.status_code == 200, response.text
    outputs = response.json()["results"]["compatibility"]["outputs"]
    shown = json_blocks(text)[0]["results"]["compatibility"]["outputs"]
    assert set(shown) == set(outputs)
    for name, pasted in shown.items():
        assert {k: outputs[name][k] for k in pasted} == pasted, name

    # README's table: 55 + 2·(1 − 1/1.5) − (20 + 15 + 17.5) = 3.167 mm still to add.
    [rig] = body["rigs"]
    reducer, wheel, plate, spacer = rig["train"]
    shift = plate["thickness_mm"] * (1 - 1 / plate["refractive_index"])
    assert f"{shift:.3f}" == "0.667" and "| + 0.667 |" in text
    by_hand = (reducer["backfocus_mm"] + shift - wheel["optical_length_mm"] - spacer["optical_length_mm"]
               - rig["camera"]["flange_to_sensor_mm"])
    # Floating-point only: the calculator adds the same distances in another order.
    assert outputs["spacer_mm"]["values"][0] == pytest.approx(by_hand, abs=1e-9)
    assert f"**{by_hand:.3f}**" in text
    diagonal = rig["camera"]["pixel_size_um"] * math.hypot(6000, 4000) / 1000
    assert f"{diagonal:.2f} mm" in text  # 27.40
    assert outputs["image_circle_mm"]["values"][0] == pytest.approx(36 * 0.8)


def sweep_request(text: str) -> dict:
    """README's abbreviated sweep, spelled out from the worked example's parts."""
    [rig] = request(text)["rigs"]
    slow = json_blocks(text)[1]["telescopes"][1]
    train = rig["train"]
    longer = [*train[:3], {"name": "spacer 25 mm", "kind": "spacer", "optical_length_mm": 25}]
    return {"telescopes": [rig["telescope"], slow], "cameras": [rig["camera"]], "trains": [[], train, longer],
            "objectives": json_blocks(text)[1]["objectives"]}


def test_the_sweep_excludes_what_readme_says_and_keeps_it_on_request(client):
    text = section()
    body = sweep_request(text)
    answer = client.post("/v1/evaluations", json=body)
    assert answer.status_code == 200, answer.text
    answer = answer.json()
    shown = json_blocks(text)[2]
    for key in ("evaluated", "considered", "excluded", "feasible"):
        assert answer[key] == shown[key], key
    assert answer["evaluated"] == answer["considered"] + sum(answer["excluded"].values())
    [front] = answer["front"]
    [pasted] = shown["front"]
    keys = ("indices", "values", "score")
    assert {k: front[k] for k in keys} == {k: pasted[k] for k in keys}
    # (4.8/6)² ÷ 0.97: the reduced focal ratio, and the reducer-flattener's default throughput.
    assert front["values"]["speed.time_factor_per_pixel"] == pytest.approx((4.8 / 6) ** 2 / 0.97, rel=1e-12)

    kept = client.post("/v1/evaluations", json={**body, "allow_incompatible": True}).json()
    assert kept["considered"] == 6 and kept["excluded"] == {}
    assert sorted(row["indices"]["train"] for row in kept["front"]) == [1, 2]
    assert '"considered": 6, "excluded": {}' in text
