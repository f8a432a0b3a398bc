"""The OpenAPI 3.1 description of the JSON API, served at /api/v1/openapi.json.

It names how to authenticate (an API token as a bearer token, or a signed-in browser's
session cookie) and every answer a route gives, refusals included: 401 and 403 from the gate
in `webui.access`, 413 from the size limit, 409 for a lost race (`webui.errors`).
"""

from __future__ import annotations

from typing import Any

from plantdb import __version__
from plantdb.records.sheet_files import COLUMNS, REQUIRED
from webui.security import COOKIE_SETTINGS

_ERROR = {
    "type": "object",
    "required": ["error"],
    "properties": {
        "error": {"type": "string", "description": "One line naming what was refused and where."},
        "details": {"type": "array", "items": {"type": "string"}},
    },
}

_DOCUMENTS: dict[str, dict[str, Any]] = {
    "Trace": {
        "type": "object",
        "required": ["start", "paths"],
        "properties": {
            "start": {"type": "string"},
            "paths": {
                "type": "array",
                "items": {
                    "type": "object",
                    "required": ["elements", "end"],
                    "properties": {
                        "elements": {"type": "array", "items": {"type": "object"}},
                        "end": {
                            "type": "object",
                            "properties": {
                                "kind": {
                                    "enum": ["equipment", "open_port", "dead_end", "circuit_end"]
                                },
                                "at": {"type": "string"},
                            },
                        },
                    },
                },
            },
        },
    },
    "Loss": {
        "type": "object",
        "required": ["target"],
        "properties": {
            "target": {"type": "string"},
            "wavelengths": {"type": "object", "description": "nm -> max_db, typical_db, items"},
            "counts": {"type": "object"},
            "length_m": {"type": "number"},
            "paths": {"type": "array", "items": {"type": "object"}},
        },
    },
    "Live": {
        "type": "object",
        "required": ["closure", "strands", "caution"],
        "properties": {
            "closure": {"type": "string"},
            "strands": {
                "type": "array",
                "items": {
                    "type": "object",
                    "properties": {
                        "address": {"type": "string"},
                        "colours": {"type": "string"},
                        "state": {"enum": ["spliced", "express", "cut", "open"]},
                        "circuits": {"type": "array", "items": {"type": "object"}},
                    },
                },
            },
            "caution": {"type": "string"},
        },
    },
    "Impact": {
        "type": "object",
        "required": ["target", "cables", "strands", "circuits"],
        "properties": {
            "target": {"type": "string"},
            "cables": {"type": "array", "items": {"type": "string"}},
            "strands": {"type": "integer"},
            "circuits": {"type": "array", "items": {"type": "object"}},
            "spans": {"type": "array", "items": {"type": "string"}},
            "caution": {"type": "string"},
        },
    },
    "Locate": {
        "type": "object",
        "required": ["cable", "sheath_mark_m", "between", "from", "lon", "lat", "range_m"],
        "properties": {
            "cable": {"type": "string"},
            "sheath_mark_m": {"type": ["number", "null"]},
            "between": {"type": "array", "items": {"type": "string"}},
            "from": {"type": "object"},
            "lon": {"type": "number"},
            "lat": {"type": "number"},
            "in_slack_at": {"type": ["string", "null"]},
            "range_m": {"type": "array", "items": {"type": "number"}},
            "range_line": {"type": "array", "items": {"type": "array"}},
            "caution": {"type": "string"},
        },
    },
    "FeatureCollection": {
        "type": "object",
        "description": "RFC 7946 FeatureCollection; each feature's properties hold layer, label,"
        " kind and url. `truncated` names the layers cut off at the server's limit.",
        "required": ["type", "features"],
        "properties": {
            "type": {"const": "FeatureCollection"},
            "bbox": {"type": "array", "items": {"type": "number"}, "minItems": 4, "maxItems": 4},
            "requested_bbox": {
                "type": "array",
                "items": {"type": "number"},
                "minItems": 4,
                "maxItems": 4,
            },
            "features": {"type": "array", "items": {"type": "object"}},
            "truncated": {"type": "array", "items": {"type": "string"}},
        },
    },
    "Bundle": {
        "type": "object",
        "required": ["format", "version"],
        "properties": {"format": {"const": "plantdb-bundle"}, "version": {"const": 1}},
    },
    "SpliceRow": {
        "type": "object",
        "required": list(REQUIRED),
        "additionalProperties": False,
        "properties": {name: {"type": ["string", "integer", "number", "null"]} for name in COLUMNS},
    },
    "SpliceReport": {
        "type": "object",
        "properties": {
            "added": {"type": "integer"},
            "already_recorded": {"type": "integer"},
            "cuts": {"type": "integer"},
            "splices": {"type": "array", "items": {"type": "object"}},
            "warnings": {"type": "array", "items": {"type": "string"}},
            "problems": {"type": "array", "items": {"type": "string"}},
            "dry_run": {"type": "boolean"},
        },
    },
    "Error": _ERROR,
}


BEARER = "bearerToken"
SESSION_COOKIE = COOKIE_SETTINGS["SESSION_COOKIE_NAME"]
SECURITY_SCHEMES = {
    BEARER: {
        "type": "http",
        "scheme": "bearer",
        "description": "An API token made by `plantdb token add NAME` (it starts pdb_), sent as"
        " `Authorization: Bearer pdb_…`; it acts with its person's role and needs no CSRF"
        f" token. A signed-in browser's session cookie ({SESSION_COOKIE}) works too; a POST"
        " with it must also send the page's CSRF token in the X-CSRFToken header.",
    }
}
# A token, or nothing: with nobody defined the server needs no credentials from this machine.
SECURITY: list[dict[str, list[str]]] = [{BEARER: []}, {}]

_ERROR_BODY = {"content": {"application/json": {"schema": {"$ref": "#/components/schemas/Error"}}}}
UNAUTHORIZED = {
    "description": "no credentials, or an unknown, revoked or timed-out token or session,"
    " once anyone is defined on the server",
    "headers": {
        "WWW-Authenticate": {
            "description": 'how to authenticate: Bearer realm="plantdb"',
            "schema": {"type": "string"},
        }
    },
    **_ERROR_BODY,
}
FORBIDDEN_TO_READ = {
    "description": "with nobody defined, a request from another machine or one that came"
    " through a proxy the server was not told of (`plantdb serve --behind-proxy`)",
    **_ERROR_BODY,
}
FORBIDDEN_TO_WRITE = {
    "description": "the person's role may not make this change (the answer names the roles"
    " that may), the server is read-only, or, with nobody defined, the request came from"
    " another machine or through a proxy the server was not told of",
    **_ERROR_BODY,
}
TOO_LARGE = {
    "description": "the body is larger than the server takes (16 MiB unless configured"
    " otherwise); the answer names the limit",
    **_ERROR_BODY,
}
LOST_RACE = {
    "description": "another change to the same strand ends or closure won a race, or the"
    " record stayed busy; nothing was written; send it again",
    **_ERROR_BODY,
}

# An address is LABEL:POINT (labels hold no colon), e.g. CO1-FDF01:12, CBL-0042:37/A.
ADDRESS = {"pattern": "^[^:]+:.+$"}


def _query(
    name: str,
    description: str,
    *,
    required: bool = False,
    kind: str = "string",
    limits: dict[str, Any] | None = None,
) -> dict[str, Any]:
    return {
        "name": name,
        "in": "query",
        "required": required,
        "description": description,
        "schema": {"type": kind, **(limits or {})},
    }


def _ref(name: str) -> dict[str, str]:
    return {"$ref": f"#/components/schemas/{name}"}


def _answers(document: str, *, found: bool = True) -> dict[str, Any]:
    error = _ERROR_BODY
    answers: dict[str, Any] = {
        "200": {
            "description": "the document",
            "content": {"application/json": {"schema": _ref(document)}},
        },
        "400": {"description": "a missing or malformed parameter", **error},
        "401": UNAUTHORIZED,
        "403": FORBIDDEN_TO_READ,
        "422": {"description": "understood but refused by the record's rules", **error},
    }
    if found:
        answers["404"] = {"description": "an unknown label", **error}
    return answers


def _get(
    summary: str, document: str, parameters: list[dict[str, Any]], **kw: Any
) -> dict[str, Any]:
    return {
        "get": {"summary": summary, "parameters": parameters, "responses": _answers(document, **kw)}
    }


_LOSS_PARAMETERS = [
    _query("circuit", "a circuit label (or give port)"),
    _query("port", "PANEL:PORT: every path from it (or give circuit)", limits=ADDRESS),
    {
        "name": "wavelength",
        "in": "query",
        "description": "test wavelength in nm; repeat or separate with commas",
        "schema": {"type": "array", "items": {"type": "integer"}},
        "style": "form",
        "explode": True,
    },
    _query("splice_max_db", "splice allowance (default 0.3 dB)", kind="number"),
    _query("splice_typical_db", "typical splice where none was measured", kind="number"),
    _query("connector_max_db", "connector pair allowance (default 0.75 dB)", kind="number"),
    _query("connector_typical_db", "typical connector pair", kind="number"),
    _query("margin_db", "a margin added to both bases", kind="number"),
]


def _splices_path() -> dict[str, Any]:
    return {
        "post": {
            "summary": "Record splice rows, all of them or none",
            "parameters": [_query("dry_run", "true: check and report, write nothing")],
            "requestBody": {
                "required": True,
                "content": {
                    "application/json": {"schema": {"type": "array", "items": _ref("SpliceRow")}}
                },
            },
            "responses": {
                **_answers("SpliceReport"),
                "201": {
                    "description": "splices added",
                    "content": {"application/json": {"schema": _ref("SpliceReport")}},
                },
                "403": FORBIDDEN_TO_WRITE,
                "409": LOST_RACE,
                "413": TOO_LARGE,
            },
        }
    }


def _paths() -> dict[str, Any]:
    return {
        "/trace": _get(
            "Trace from a port, a strand or a circuit (exactly one)",
            "Trace",
            [
                _query("port", "PANEL:PORT or EQUIPMENT:PORT", limits=ADDRESS),
                _query("fiber", "CABLE:STRAND", limits=ADDRESS),
                _query("circuit", "a circuit label"),
            ],
        ),
        "/loss": _get("Expected loss per wavelength on both bases", "Loss", _LOSS_PARAMETERS),
        "/live": _get(
            "What is live through a closure",
            "Live",
            [_query("closure", "closure label", required=True)],
        ),
        "/impact": _get(
            "What a cut takes down (exactly one of span, structure)",
            "Impact",
            [_query("span", "span label"), _query("structure", "structure label")],
        ),
        "/locate": _get(
            "Where an OTDR distance from a port falls",
            "Locate",
            [
                _query(
                    "port", "PANEL:PORT the OTDR was connected to", required=True, limits=ADDRESS
                ),
                _query(
                    "distance_m",
                    "distance the OTDR reports, metres",
                    required=True,
                    kind="number",
                    limits={"exclusiveMinimum": 0},
                ),
                _query("wavelength", "OTDR wavelength, nm", kind="integer"),
                _query("otdr_index", "group index the OTDR was set to", kind="number"),
            ],
        ),
        "/map": _get(
            "Structures, spans, closures and panels in a box",
            "FeatureCollection",
            [_query("bbox", "WEST,SOUTH,EAST,NORTH in degrees (WGS 84)", required=True)],
            found=False,
        ),
        "/geometry": _get(
            "Lines of cables and of circuits' paths",
            "FeatureCollection",
            [
                _query("cable", "cable label (repeatable)"),
                _query("circuit", "circuit label (repeatable)"),
            ],
        ),
        "/search": _get(
            "Things whose label holds the text",
            "SearchResults",
            [_query("q", "part of a label, any letter case", required=True)],
            found=False,
        ),
        "/bundle": _get("The whole record as a bundle", "Bundle", [], found=False),
        "/splices": _splices_path(),
    }


def openapi_document() -> dict[str, Any]:
    """The description: every route of the API, its parameters and its documents."""
    schemas = dict(_DOCUMENTS)
    schemas["SearchResults"] = {
        "type": "object",
        "properties": {
            "query": {"type": "string"},
            "results": {"type": "array", "items": {"type": "object"}},
        },
    }
    return {
        "openapi": "3.1.0",
        "info": {
            "title": "plantdb API",
            "version": __version__,
            "description": "Read the cable plant record and record splices. The answers are the "
            "same JSON documents as the command line's --json. Unknown labels answer 404; "
            'bad input 400 or 422 with {"error": ..., "details": [...]}. Once anyone is '
            "defined on the server every call needs an API token (Authorization: Bearer) or a "
            "signed-in session, else 401; with nobody defined the server answers only its own "
            "machine, without credentials, and refuses others with 403. A role that may not "
            "make a change is refused with 403.",
        },
        "servers": [{"url": "/api/v1"}],
        "security": SECURITY,
        "paths": _paths(),
        "components": {"schemas": schemas, "securitySchemes": SECURITY_SCHEMES},
    }
