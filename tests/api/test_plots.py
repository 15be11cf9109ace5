"""Pictures: the decay and the profiles, drawn as SVG (or PNG) from the same answer."""

from __future__ import annotations

import json
import subprocess
import sys
import xml.etree.ElementTree as ElementTree
from pathlib import Path
from typing import Any

import pytest
from fastapi.testclient import TestClient

EXAMPLES = Path(__file__).resolve().parents[2] / "openapi_examples"
CASE: dict[str, Any] = json.loads((EXAMPLES / "settling-time.bead-release.json").read_text())[
    "value"
]
_SVG = "{http://www.w3.org/2000/svg}"


def _drawn(svg: bytes) -> dict[str, ElementTree.Element]:
    """The SVG's elements by id."""
    root = ElementTree.fromstring(svg)
    return {element.get("id", ""): element for element in root.iter() if element.get("id")}


def _texts(element: ElementTree.Element) -> list[str]:
    return ["".join(text.itertext()) for text in element.iter(f"{_SVG}text")]


def test_decay_marks_the_settling_time_as_drawn_elements(client: TestClient) -> None:
    answer = client.post("/v1/settling-time", json=CASE).json()
    response = client.post("/v1/plots/decay", json=CASE)
    assert response.status_code == 200, response.text
    assert response.headers["content-type"].startswith("image/svg+xml")
    elements = _drawn(response.content)
    marker = elements["settling-time"]
    drawn = [e for e in marker.iter() if e.tag in (f"{_SVG}use", f"{_SVG}path")]
    assert drawn, "the settling-time marker draws nothing"
    assert _texts(elements["settling-time-label"]) == [f"settled: {answer['time_text']}"]
    assert any(e.tag == f"{_SVG}path" for e in elements["tolerance"].iter())
    assert "measure-unexchanged_fraction" in elements  # the criterion's own curve
    labels = [text for element in elements.values() for text in _texts(element)]
    assert "time (min)" in labels


def test_pictures_are_the_same_bytes_for_the_same_case(client: TestClient) -> None:
    first = client.post("/v1/plots/decay", json=CASE).content
    second = client.post("/v1/plots/decay", json=CASE).content
    assert first == second
    assert b"<dc:date>" not in first


def test_profiles_draw_each_time_and_the_final_state(client: TestClient) -> None:
    response = client.post("/v1/plots/profiles", json=CASE)
    assert response.status_code == 200, response.text
    elements = _drawn(response.content)
    assert {f"profile-{i}" for i in range(4)} | {"final-state"} <= set(elements)
    labels = [text for element in elements.values() for text in _texts(element)]
    assert "r from the centre (mm)" in labels


def test_png_on_request(client: TestClient) -> None:
    response = client.post("/v1/plots/profiles?format=png", json=CASE)
    assert response.status_code == 200
    assert response.headers["content-type"] == "image/png"
    assert response.content.startswith(b"\x89PNG\r\n\x1a\n")


@pytest.mark.parametrize(
    ("path", "change", "pointer"),
    [
        (
            "/v1/plots/decay",
            {"criterion": {"measure": "max_deviation", "tolerance": 1.5}},
            "/criterion",
        ),
        ("/v1/plots/decay?format=gif", {}, "format"),
    ],
)
def test_picture_errors_name_the_field(
    client: TestClient, path: str, change: dict[str, Any], pointer: str
) -> None:
    response = client.post(path, json={**CASE, **change})
    assert response.status_code == 422, response.text
    pointers = [e["pointer"] for e in response.json()["errors"]]
    assert any(pointer in p for p in pointers) or pointer == "format", pointers


def test_matplotlib_is_not_imported_at_start_up() -> None:
    code = "import sys, service.app; print('matplotlib' in sys.modules)"
    printed = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    ).stdout.strip()
    assert printed == "False"
