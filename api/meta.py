"""``/v1/health``, ``/v1/parts`` and ``/openapi.json``."""

from __future__ import annotations

from flask import Blueprint, current_app, jsonify

from schemcheck import __version__

from .schemas import HealthSchema, PartsSchema

bp = Blueprint("meta", __name__)


@bp.get("/v1/health")
def health():
    return HealthSchema().dump({"status": "ok", "version": __version__})


@bp.get("/v1/parts")
def parts():
    from schemcheck.io.partslib import load_parts_library

    path = current_app.config["AUDIT_OVERRIDES"].get("parts_library")
    library = load_parts_library(path) if path else {}
    return PartsSchema().dump({"library": path, "parts": library})


@bp.get("/openapi.json")
def openapi():
    from .openapi import build_spec

    return jsonify(build_spec(bool(current_app.config["TOKEN"])).to_dict())
