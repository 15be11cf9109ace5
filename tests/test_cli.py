"""The command line: ``mixclock solve`` answers as the API does."""

from __future__ import annotations

import io
import json
from pathlib import Path
from typing import Any

import pytest
from fastapi.testclient import TestClient

from service.cli import main

EXAMPLE = Path(__file__).resolve().parents[1] / "openapi_examples"


def _case(name: str) -> dict[str, Any]:
    document: dict[str, Any] = json.loads((EXAMPLE / f"settling-time.{name}.json").read_text())
    return document["value"]


def test_solve_json_is_the_api_answer(
    client: TestClient, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    case = _case("bead-release")
    path = tmp_path / "case.json"
    path.write_text(json.dumps(case))
    assert main(["solve", str(path), "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    served = client.post("/v1/settling-time", json=case).json()
    assert printed["time_s"] == served["time_s"]
    assert printed["method"] == served["method"]
    assert printed["cautions"] == served["cautions"]


def test_solve_reads_standard_input_and_prints_a_summary(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    case = _case("sample-vial-to-bath")
    monkeypatch.setattr("sys.stdin", io.StringIO(json.dumps(case)))
    assert main(["solve"]) == 0
    summary = capsys.readouterr().out
    assert summary.startswith("Settled after ")
    assert "Cautions:" in summary and "estimated relative error" in summary


def test_a_refused_case_names_its_fields(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    case = {**_case("bead-release"), "accuracy": 5.0}
    case["body"] = {"shape": "sphere", "radius": "3 kg"}
    path = tmp_path / "case.json"
    path.write_text(json.dumps(case))
    assert main(["solve", str(path)]) == 2
    message = capsys.readouterr().err
    assert "/accuracy:" in message


def test_a_translation_refusal_names_its_field(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    case = {**_case("bead-release"), "body": {"shape": "sphere", "radius": "3 kg"}}
    path = tmp_path / "case.json"
    path.write_text(json.dumps(case))
    assert main(["solve", str(path), "--json"]) == 2
    printed = json.loads(capsys.readouterr().out)
    assert printed["errors"][0]["pointer"] == "/body/radius"


def test_input_that_is_not_json_is_its_own_failure(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "case.json"
    path.write_text("{not json")
    assert main(["solve", str(path)]) == 3
    assert "cannot read a JSON case" in capsys.readouterr().err
