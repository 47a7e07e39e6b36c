"""The browsable API reference, loaded as a person loads it: a real headless browser
(Playwright driving the system's Chromium through its executable path; Playwright's own
browser download cannot be used here) opens `/` on a real server, follows the link to
`/v1/docs`, and must find every operation of the OpenAPI document listed, with no request
leaving the server (the viewer's assets are packaged, not fetched from a CDN).

Chromium comes from the Debian package `chromium` (`.ci/run` installs it when missing).
Without it the test is skipped, unless REQUIRE_BROWSER=1 (set by `.ci/run`) makes its
absence a failure.
"""
from __future__ import annotations

import os
import shutil
from collections.abc import Iterator

import pytest
import requests

from tests.live_server import LiveServer, running_server

pytestmark = pytest.mark.server

CHROMIUM_NAMES = ("chromium", "chromium-browser")


def chromium_path() -> str | None:
    return next((found for name in CHROMIUM_NAMES if (found := shutil.which(name))), None)


@pytest.fixture(scope="module")
def browser_path() -> str:
    path = chromium_path()
    if path is None:
        message = f"no Chromium on PATH (looked for {', '.join(CHROMIUM_NAMES)}; apt-get install chromium)"
        if os.environ.get("REQUIRE_BROWSER"):
            pytest.fail(message)
        pytest.skip(message)
    return path


@pytest.fixture(scope="module")
def server(tmp_path_factory, make_empty_database) -> Iterator[LiveServer]:
    with running_server(make_empty_database(), tmp_path_factory.mktemp("reference")) as live:
        yield live


def test_the_front_door_links_to_the_reference_which_lists_every_operation(server, browser_path):
    from playwright.sync_api import sync_playwright

    document = requests.get(server.base_url + "/v1/openapi.json", timeout=10).json()
    operation_ids = sorted(operation["operationId"] for item in document["paths"].values()
                           for method, operation in item.items() if method in ("get", "post", "put", "delete"))
    requested: list[str] = []
    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=browser_path, headless=True,
                                             args=["--no-sandbox", "--disable-dev-shm-usage"])
        try:
            page = browser.new_page()
            page.on("request", lambda request: requested.append(request.url))
            errors: list[str] = []
            page.on("pageerror", lambda error: errors.append(str(error)))

            page.goto(server.base_url + "/")
            page.get_by_role("link", name="API reference").click()
            page.wait_for_url(server.base_url + "/v1/docs")
            page.wait_for_selector(".opblock", timeout=30_000)
            shown = sorted(page.locator(".opblock-summary-operation-id").all_inner_texts())
            title = page.locator(".info .title").inner_text()
        finally:
            browser.close()
    assert shown == operation_ids
    assert title.startswith("plugfit")
    assert errors == []
    outside = [url for url in requested if not url.startswith(server.base_url)]
    assert outside == [], f"the reference fetched from other hosts: {outside}"
    assert server.base_url + "/v1/openapi.json" in requested
