"""The page at /, end to end in headless Chromium (Playwright driving Debian's chromium).

Skipped, with a line saying so, where Playwright or /usr/bin/chromium is missing; .ci/run
installs both and fails if these tests were skipped.
"""

from __future__ import annotations

import shutil
import socket
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import httpx
import pytest

from service.app import create_app
from service.settings import Settings

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
CHROMIUM_SKIP = (
    "Chromium not available: the page's end-to-end tests need Playwright and Debian's chromium "
    "(.ci/run installs both)"
)
# as the machine's notes advise for a closed network, and headless as root
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    import uvicorn

    port = _free_port()
    app = create_app(Settings(data_dir=tmp_path_factory.mktemp("page-data")))
    config = uvicorn.Config(app, host="127.0.0.1", port=port, log_level="warning")
    running = uvicorn.Server(config)
    thread = threading.Thread(target=running.run, daemon=True)
    thread.start()
    deadline = time.monotonic() + 20
    while not running.started:
        if time.monotonic() > deadline:
            raise RuntimeError("the test server did not start")
        time.sleep(0.05)
    yield f"http://127.0.0.1:{port}"
    running.should_exit = True
    thread.join(timeout=10)


@pytest.fixture(scope="module")
def browser() -> Iterator[Any]:
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        pytest.skip(CHROMIUM_SKIP)
    if not Path(CHROMIUM).exists():
        pytest.skip(CHROMIUM_SKIP)
    with sync_playwright() as playwright:
        launched = playwright.chromium.launch(
            executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS
        )
        yield launched
        launched.close()


@pytest.fixture
def page(browser: Any, server: str) -> Iterator[Any]:
    context = browser.new_context()
    opened = context.new_page()
    opened.goto(server + "/")
    yield opened
    context.close()


def test_the_form_answers_with_the_pictures_drawn(page: Any, server: str) -> None:
    page.fill("#size", "2 mm")
    page.fill("#diffusivity", "1e-9 m^2/s")
    page.fill("#level", "0.95")
    page.press("#level", "Enter")  # submitted from the keyboard
    page.wait_for_selector("#time:has-text('Settled after')")
    expected = httpx.post(
        server + "/v1/settling-time",
        json={
            "body": {"shape": "sphere", "radius": "2 mm"},
            "medium": {"diffusivity": "1e-9 m^2/s"},
            "initial": {"kind": "uniform", "value": 1},
            "surface": {"kind": "fixed_value", "value": 0},
            "criterion": {"measure": "fraction_equilibrated", "fraction": 0.95},
        },
    ).json()
    assert page.text_content("#time") == f"Settled after {expected['time_text']}"
    assert "planning estimate" in page.text_content("#cautions")
    for picture in ("#decay", "#profiles"):
        page.wait_for_function(
            f"document.querySelector('{picture}').complete"
            f" && document.querySelector('{picture}').naturalWidth > 0"
        )
    link = page.get_attribute("#result-link", "href")
    assert link is not None and link.startswith("/v1/results/")
    assert httpx.get(server + link).json()["answer"]["time_s"] == expected["time_s"]


def test_an_error_appears_beside_its_field(page: Any) -> None:
    page.fill("#size", "3 kg")
    page.press("#size", "Enter")
    page.wait_for_selector("#size-error:not(:empty)")
    assert "length" in page.text_content("#size-error")
    assert page.get_attribute("#size", "aria-invalid") == "true"
    assert page.evaluate("document.activeElement.id") == "size"
    assert page.text_content("#level-error") == ""


def test_every_field_is_reached_with_the_tab_key(page: Any) -> None:
    reached = []
    for _ in range(40):
        page.keyboard.press("Tab")
        reached.append(page.evaluate("document.activeElement.id"))
        if reached[-1] == "solve":
            break
    visible = [
        "shape",
        "size",
        "inputs",
        "diffusivity",
        "start",
        "surface",
        "surface_value",
        "film",
        "measure",
        "level",
        "store",
        "solve",
    ]
    assert [name for name in reached if name in visible] == visible
