"""The rigbench web service: app factory, storage, routes, CLI and demo data.

Nothing here builds state at import time; see :func:`api.app.create_app`.
"""
