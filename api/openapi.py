"""Print the service's OpenAPI document: ``python -m api.openapi > openapi/openapi.json``."""

from __future__ import annotations

import json
import sys

from api.app import create_app
from api.settings import Settings


def document() -> dict:
    # An in-memory database: generating the document touches no file.
    return create_app(Settings(database_url="sqlite://")).openapi()


def render() -> str:
    return json.dumps(document(), indent=2, ensure_ascii=False) + "\n"


def main() -> None:
    sys.stdout.write(render())


if __name__ == "__main__":
    main()
