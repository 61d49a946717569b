"""Endpoints about the service itself: health and its OpenAPI description."""

from __future__ import annotations

import functools
from pathlib import Path

from flask import Blueprint, Response, current_app, jsonify

bp = Blueprint("meta", __name__)


@functools.cache
def openapi_text() -> str:
    """The packaged copy in an installed wheel, else the checkout's openapi.yaml."""
    package = Path(__file__).resolve().parent.parent
    for candidate in (package / "openapi.yaml", package.parent / "openapi.yaml"):
        if candidate.is_file():
            return candidate.read_text(encoding="utf-8")
    raise FileNotFoundError("openapi.yaml is not installed with the package")


@bp.get("/healthz")
def healthz():
    return jsonify({"status": "ok", "rules_version": current_app.extensions["cleaner"].rules.version})


@bp.get("/openapi.yaml")
def openapi():
    return Response(openapi_text(), mimetype="application/yaml")
