"""The API documentation pages load nothing from outside the server (api/app.py, fastapi-offline).

The browser test (tests/browser/test_club_page.py) checks that Swagger UI really renders the document
with the network cut off; these tests check the pages' references without a browser.
"""

from __future__ import annotations

import re

import pytest

from html_tables import parse


def references(html: str) -> list[str]:
    found = []
    for _tag, attrs in parse(html).elements:
        found += [value for key, value in attrs.items() if key in {"src", "href"} and value]
    # Scripts in the page name the OpenAPI URL and the oauth2 redirect as strings.
    found += re.findall(r"""url: *['"]([^'"]+)['"]""", html)
    return found


@pytest.mark.parametrize("page", ["/docs", "/redoc"])
def test_the_docs_pages_load_only_this_servers_files(client, page):
    response = client.get(page)
    assert response.status_code == 200
    urls = references(response.text)
    assert urls, "the page names no files at all"
    for url in urls:
        assert url.startswith("/") and not url.startswith("//"), url
        assert client.get(url).status_code == 200, url


def test_the_bundled_swagger_ui_is_version_5_which_reads_openapi_3_1(client):
    bundle = client.get("/static-offline-docs/swagger-ui-bundle.js").text
    # Swagger UI added OpenAPI 3.1 support in 5.0 (swagger-ui release notes, 2023); 4.x cannot render it.
    versions = set(re.findall(r'"(5\.\d+\.\d+)"', bundle))
    assert versions, "no Swagger UI 5 version string in the bundle"
    assert client.get("/openapi.json").json()["openapi"].startswith("3.1")


def test_the_docs_page_asks_no_outside_validator(client):
    assert '"validatorUrl": null' in client.get("/docs").text
