"""The OpenAPI 3 document of /api/v1, written out by hand to match :mod:`edgefit_web.api`.

``build_openapi(config)`` returns it as a dict (the limits of the running configuration are
written into it). tests/test_api_schema.py checks the server against it with schemathesis.
"""
from __future__ import annotations

from edgefit import __version__
from edgefit.jobs import OPTION_TYPES, READER_OPTIONS

from .api import MAX_ID, MAX_META_KEY, MAX_META_KEYS, MAX_META_VALUE, MAX_NAME, PREFIX


def _ref(name):
    return {"$ref": f"#/components/schemas/{name}"}


def _json(schema, description):
    return {"description": description, "content": {"application/json": {"schema": schema}}}


def _err(description):
    return _json(_ref("Error"), description)


_ID = {"type": "integer", "minimum": 1, "maximum": MAX_ID}
_NUM = {"type": "number"}
_NULL_NUM = {"type": "number", "nullable": True}
_TEXT = {"type": "string"}
#: Constraints and descriptions beside the JSON types of edgefit.jobs.OPTION_TYPES.
_OPTION_DETAILS = {
    "quantity": {"description": "transmittance, reflectance, absorbance, "
                 "absorption-coefficient or diffuse-reflectance (detected from the headers when "
                 "omitted)", "example": "transmittance"},
    "x_unit": {"description": "nm, um, ev or cm-1 (detected when omitted)"},
    "y_unit": {"enum": ["fraction", "percent"]},
    "column": {"minimum": 1, "description": "Keep only this column (header or 1-based number)"},
    "thickness": {"description": "Film thickness with its unit: '400nm', '0.4um'",
                  "example": "400nm"},
    "thickness_nm": {"exclusiveMinimum": True, "minimum": 0, "description": "Film thickness "
                     "[nm]"},
    "substrate_index": {"exclusiveMinimum": True, "minimum": 1, "exclusiveMaximum": True,
                        "maximum": 5, "description": "Refractive index of a transparent "
                        "substrate"},
    "model": {"enum": ["auto", "direct", "indirect", "both"]},
    "tr_method": {"enum": ["exact", "simple", "hishikawa"]},
    "fringes": {"enum": ["auto", "off"]},
    "window": {"description": "Tauc window LO:HI [eV], as text or two numbers",
               "example": "1.60:1.85"},
    "urbach_window": {"description": "Urbach window LO:HI [eV], as text or two numbers"},
    "range": {"description": "Energy range analysed LO:HI [eV], as text or two numbers "
              "(default: every trusted point)", "example": "1.0:2.5"},
    "bootstrap": {"minimum": 0, "maximum": 5000},
    "seed": {"minimum": 0},
    "saturation_t": {"exclusiveMinimum": True, "minimum": 0},
    "noise_floor_alpha_d": {"exclusiveMinimum": True, "minimum": 0},
    "reflectance_spectrum_id": {"minimum": 1, "maximum": MAX_ID, "description": "A "
                                "reflectance spectrum of the archive measured on the same spot "
                                "(for T + R)"},
    "substrate_spectrum_id": {"minimum": 1, "maximum": MAX_ID, "description": "The bare "
                              "substrate's transmittance, a spectrum of the archive"},
}
_OPTION_DETAILS["window_ev"] = _OPTION_DETAILS["window"]
_OPTION_DETAILS["urbach_window_ev"] = _OPTION_DETAILS["urbach_window"]
_OPTION_DETAILS["range_ev"] = _OPTION_DETAILS["range"]
_NUMERIC = ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum")


def _option_schema(name: str) -> dict:
    details = dict(_OPTION_DETAILS.get(name, {}))
    described = {k: details.pop(k) for k in ("description", "example") if k in details}
    alternatives = []
    for t in OPTION_TYPES[name]:
        if t == "array":
            alternatives.append({"type": "array", "items": {"type": "number"}, "minItems": 2,
                                 "maxItems": 2})
        elif t == "string":
            # OpenAPI 3.0.3: a nullable enum lists null among its values
            alternatives.append({"type": "string",
                                 **({"enum": [*details["enum"], None]} if "enum" in details
                                    else {})})
        else:
            alternatives.append({"type": t, **{k: v for k, v in details.items()
                                               if k in _NUMERIC}})
    schema = alternatives[0] if len(alternatives) == 1 else {"oneOf": alternatives}
    return {**schema, "nullable": True, **described}


def _options_schema(*, reader: bool):
    names = [n for n in OPTION_TYPES if reader or n not in READER_OPTIONS]
    return {"type": "object", "properties": {n: _option_schema(n) for n in names},
            "additionalProperties": False,
            "description": "Options of the reader (at upload) and of the analysis; null means "
                           "not set. Values the schema cannot judge (a length without a unit, a "
                           "window outside the data) get 400 with the reason."}


def build_openapi(config) -> dict:
    """The OpenAPI 3.0 document for an application with this configuration."""
    max_mb = config.get("MAX_CONTENT_LENGTH") or 0
    max_files = config.get("MAX_FILES", 200)
    max_points = config.get("MAX_POINTS")
    limits = (f"Limits: requests up to {max_mb / 1024 / 1024:g} MB, {max_files} files per "
              f"upload or batch and spectra per job, {max_points} data rows per file; beyond "
              "them the answer is 413 naming the limit.")
    id_param = lambda name, what: {"name": name, "in": "path", "required": True,  # noqa: E731
                                   "description": f"Id of the {what}", "schema": _ID,
                                   "example": 1}
    auth_errors = {"401": _err("Missing or invalid API token")}
    write_errors = {**auth_errors, "403": _err("A read-only token: writes need a normal or "
                                               "admin token")}
    admin_errors = {**auth_errors, "403": _err("Not an admin token")}
    busy = {"503": _err("Other uploads are being read; send the files again later "
                        "(Retry-After)")}
    by = {**_ID, "nullable": True, "description": "Id of the token that made it (null: made "
          "by the CLI, or before tokens were recorded)"}
    token = {"type": "object", "properties": {
        "id": _ID, "name": {"type": "string", "description": "The person or instrument it "
                            "belongs to"},
        "kind": {"type": "string", "enum": ["admin", "normal", "read-only"]},
        "created": _TEXT, "created_by": by,
        "revoked": {"type": "string", "nullable": True}},
        "required": ["id", "name", "kind", "created", "revoked"]}

    gap = {"type": "object", "properties": {
        "kind": {"type": "string", "enum": ["direct", "indirect"]},
        "eg_ev": _NULL_NUM, "eg_err_ev": _NULL_NUM,
        "window_ev": {"type": "array", "items": _NUM, "nullable": True},
        "method": _TEXT}, "required": ["kind", "eg_ev"]}
    fit_brief = {"type": "object", "properties": {
        "id": _ID, "spectrum_id": _ID, "job_id": {**_ID, "nullable": True},
        "options": {"type": "object"}, "version": _TEXT, "created": _TEXT, "created_by": by,
        "transition": {"type": "string", "nullable": True},
        "gaps": {"type": "array", "items": {"type": "object", "properties": {
            "kind": _TEXT, "eg_ev": _NULL_NUM, "eg_err_ev": _NULL_NUM}}},
        "eu_mev": _NULL_NUM, "eu_err_mev": _NULL_NUM,
        "flags": {"type": "array", "items": _TEXT}},
        "required": ["id", "spectrum_id", "options", "version", "created", "gaps"]}
    spectrum = {"type": "object", "properties": {
        "id": _ID, "sample_id": _ID, "sha256": {"type": "string", "pattern": "^[0-9a-f]{64}$"},
        "file_name": _TEXT, "size": {"type": "integer", "minimum": 0},
        "quantity": _TEXT, "x_unit": _TEXT, "y_unit": _TEXT,
        "points": {"type": "integer", "minimum": 0}, "column": _TEXT,
        "sample": {"type": "string", "description": "Sample name the file itself gives"},
        "warnings": {"type": "array", "items": _TEXT},
        "metadata": {"type": "object", "additionalProperties": _TEXT},
        "reader": {"type": "object"}, "options": {"type": "object"}, "created": _TEXT,
        "created_by": by,
        "existing": {"type": "boolean", "description": "True when this exact reading of "
                     "this file was in the sample already (nothing new stored)"}},
        "required": ["id", "sample_id", "sha256", "file_name", "points", "warnings"]}
    meta_value = {"nullable": True, "oneOf": [{"type": "string", "maxLength": MAX_META_VALUE},
                                              {"type": "number"}, {"type": "boolean"}]}
    metadata = {"type": "object", "maxProperties": MAX_META_KEYS,
                "propertyNames": {"minLength": 1, "maxLength": MAX_META_KEY},
                "additionalProperties": meta_value,
                "description": "Free key: value data (text, numbers, true/false, null)",
                "example": {"series": "anneal-2024", "anneal_c": 300}}
    sample = {"type": "object", "properties": {
        "id": _ID, "name": _TEXT, "metadata": {"type": "object"}, "created": _TEXT,
        "created_by": by, "spectra_count": {"type": "integer"}, "fits_count": {"type": "integer"},
        "latest_fit": {**_ref("FitBrief"), "nullable": True}},
        "required": ["id", "name", "metadata", "created"]}
    job = {"type": "object", "properties": {
        "id": _ID, "kind": {"type": "string", "enum": ["fit", "batch"]},
        "state": {"type": "string", "enum": ["queued", "running", "done", "failed"]},
        "progress": _ref("Progress"),
        "fit_ids": {"type": "array", "items": _ID},
        "errors": {"type": "array", "items": {"type": "object", "properties": {
            "item": {"type": "integer"}, "spectrum_id": {**_ID, "nullable": True},
            "source": _TEXT, "code": _TEXT, "message": _TEXT},
            "required": ["code", "message"]}},
        "spectrum_ids": {"type": "array", "items": _ID},
        "items": {"type": "array", "description": "One entry per input, in order: its state "
                  "(pending, done, failed) and its fit", "items": {
                      "type": "object", "properties": {
                          "item": {"type": "integer"},
                          "spectrum_id": {**_ID, "nullable": True}, "source": _TEXT,
                          "state": {"type": "string", "enum": ["pending", "done", "failed"]},
                          "fit_id": {**_ID, "nullable": True}},
                      "required": ["item", "state"]}},
        "options": {"type": "object"}, "reason": {"type": "string", "nullable": True},
        "created": _TEXT, "updated": _TEXT, "created_by": by},
        "required": ["id", "state", "progress", "fit_ids", "errors"]}
    accepted = {"type": "object", "properties": {
        "job_id": _ID, "state": {"type": "string", "enum": ["queued", "running", "done",
                                                            "failed"]},
        "progress": _ref("Progress"),
        "samples": {"type": "array", "items": {"type": "object", "properties": {
            "id": _ID, "name": _TEXT, "existing": {"type": "boolean"}}}},
        "spectra": {"type": "array", "items": _ref("Spectrum")},
        "errors": {"type": "array", "items": {"type": "object"}}},
        "required": ["job_id"]}
    fit = {"type": "object", "description": "The result entry of `edgefit fit --json` plus the "
           "archive's fields", "properties": {
               "id": _ID, "spectrum_id": _ID, "sample_id": _ID,
               "job_id": {**_ID, "nullable": True}, "created": _TEXT, "created_by": by,
               "version": _TEXT,
               "options": {"type": "object"}, "requested_options": {"type": "object"},
               "source": _TEXT, "column": _TEXT, "sample": _TEXT, "sha256": _TEXT,
               "transition": {"type": "string", "enum": ["direct", "indirect",
                                                         "direct+indirect", "ambiguous"]},
               "gaps": {"type": "array", "items": gap},
               "rejected_gaps": {"type": "array", "items": gap},
               "tauc": {"type": "object"},
               "urbach": {"type": "object", "nullable": True},
               "film": {"type": "object", "nullable": True},
               "flags": {"type": "array", "items": {"type": "object", "properties": {
                   "code": _TEXT, "message": _TEXT}, "required": ["code", "message"]}}},
           "required": ["id", "spectrum_id", "sample_id", "created", "options", "version",
                        "transition", "gaps", "tauc", "urbach", "film", "flags"]}
    upload_body = {"multipart/form-data": {"schema": {
        "type": "object", "required": ["file"], "properties": {
            "file": {"type": "array", "items": {"type": "string", "format": "binary"},
                     "minItems": 1, "maxItems": max_files,
                     "description": "One or more spectrum files (CSV, TSV, text exports)"},
            "options": {"type": "string", "description": "A JSON object of options "
                        "(see the Options schema), e.g. {\"thickness\": \"400nm\"}"}}},
        "encoding": {"file": {"contentType": "application/octet-stream"}}}}

    return {
        "openapi": "3.0.3",
        "info": {"title": "edgefit service", "version": __version__,
                 "description": "Archive and batch fitting of optical absorption edges (band "
                 "gaps, transition type, Urbach energy). Every route but /health and "
                 "/openapi.json needs 'Authorization: Bearer <token>' (401 without one). A "
                 "token belongs to a person or instrument and is admin, normal or read-only: "
                 "a read-only token gets 403 on every write, and only an admin token manages "
                 "tokens (/tokens). Each record names the token that made it (created_by). "
                 "Errors are "
                 "{\"error\": {\"code\", \"message\"}}. " + limits},
        "servers": [{"url": PREFIX}],
        "security": [{"bearer": []}],
        "components": {
            "securitySchemes": {"bearer": {"type": "http", "scheme": "bearer",
                                           "description": "A token from `edgefit token "
                                           "create --name NAME`"}},
            "schemas": {
                "Error": {"type": "object", "required": ["error"], "properties": {"error": {
                    "type": "object", "required": ["code", "message"], "properties": {
                        "code": _TEXT, "message": _TEXT, "file": _TEXT,
                        "line": {"type": "integer"}, "column": _TEXT, "fix": _TEXT}}}},
                "Progress": {"type": "object", "required": ["done", "total"], "properties": {
                    "done": {"type": "integer", "minimum": 0},
                    "total": {"type": "integer", "minimum": 0}}},
                "Options": _options_schema(reader=True),
                "FitOptions": _options_schema(reader=False),
                "Metadata": metadata,
                "Sample": sample, "FitBrief": fit_brief, "Spectrum": spectrum, "Job": job,
                "Accepted": accepted, "Fit": fit, "Token": token,
            },
        },
        "paths": {
            "/health": {"get": {
                "operationId": "health", "summary": "Service status", "security": [],
                "responses": {"200": _json({"type": "object", "required": ["status", "version"],
                                            "properties": {"status": {"type": "string",
                                                                      "enum": ["ok"]},
                                                           "version": _TEXT}}, "Up")}}},
            "/openapi.json": {"get": {
                "operationId": "openapi", "summary": "This document", "security": [],
                "responses": {"200": _json({"type": "object"}, "The OpenAPI document")}}},
            "/samples": {
                "post": {
                    "operationId": "createSample", "summary": "Create a sample",
                    "requestBody": {"required": True, "content": {"application/json": {
                        "schema": {"type": "object", "required": ["name"],
                                   "additionalProperties": False, "properties": {
                                       "name": {"type": "string", "minLength": 1,
                                                "maxLength": MAX_NAME, "pattern": r"\S"},
                                       "metadata": _ref("Metadata")}}}}},
                    "responses": {"201": _json(_ref("Sample"), "Created"),
                                  "400": _err("Invalid name or metadata"), **write_errors}},
                "get": {
                    "operationId": "listSamples", "summary": "Find samples (newest first)",
                    "parameters": [
                        {"name": "name", "in": "query", "schema": _TEXT,
                         "description": "Part of the name (case-insensitive)"},
                        {"name": "metadata", "in": "query", "style": "form", "explode": True,
                         "schema": {"type": "array", "items": {"type": "string",
                                                               "pattern": "^[^=]+=.*$"}},
                         "description": "key=value; several are all required"},
                        {"name": "limit", "in": "query",
                         "schema": {"type": "integer", "minimum": 1, "maximum": 1000}},
                        {"name": "offset", "in": "query",
                         "schema": {"type": "integer", "minimum": 0, "maximum": 10 ** 9}}],
                    "responses": {"200": _json({"type": "object", "required": ["samples"],
                                                "properties": {
                                                    "samples": {"type": "array",
                                                                "items": _ref("Sample")},
                                                    "total": {"type": "integer"},
                                                    "limit": {"type": "integer"},
                                                    "offset": {"type": "integer"}}},
                                               "Samples"),
                                  "400": _err("Invalid filter"), **auth_errors}}},
            "/samples/{sample_id}": {"get": {
                "operationId": "getSample", "summary": "A sample, its spectra and fit history",
                "parameters": [id_param("sample_id", "sample")],
                "responses": {"200": _json({"allOf": [_ref("Sample"), {"type": "object",
                              "required": ["spectra"], "properties": {"spectra": {
                                  "type": "array", "items": {"allOf": [_ref("Spectrum"), {
                                      "type": "object", "properties": {"fits": {
                                          "type": "array", "items": _ref("FitBrief")}}}]}}}}]},
                                           "The sample"),
                              "404": _err("No such sample"), **auth_errors}}},
            "/samples/{sample_id}/spectra": {"post": {
                "operationId": "uploadSpectra",
                "summary": "Add spectrum files to a sample (all files are read first: one "
                           "unreadable file and nothing is stored)",
                "parameters": [id_param("sample_id", "sample")],
                "requestBody": {"required": True, "content": upload_body},
                "responses": {"201": _json({"type": "object", "required": ["spectra"],
                                            "properties": {"spectra": {
                                                "type": "array", "items": _ref("Spectrum")}}},
                                           "Stored"),
                              "400": _err("No file or invalid options"),
                              "404": _err("No such sample"),
                              "413": _err("Over a limit (size, files, points)"),
                              "422": _err("A file cannot be read (the reader's message)"),
                              **busy, **write_errors}}},
            "/fits": {"post": {
                "operationId": "createFits", "summary": "Fit archived spectra (a job)",
                "requestBody": {"required": True, "content": {"application/json": {"schema": {
                    "type": "object", "required": ["spectrum_ids"],
                    "additionalProperties": False, "properties": {
                        "spectrum_ids": {"type": "array", "items": _ID, "minItems": 1,
                                         "maxItems": max_files},
                        "options": _ref("FitOptions")}}}}},
                "responses": {"202": _json(_ref("Accepted"), "Queued; poll the job"),
                              "400": _err("Invalid ids or options"),
                              "404": _err("No such spectrum"),
                              "413": _err("Too many spectra"), **write_errors}}},
            "/batch": {"post": {
                "operationId": "createBatch",
                "summary": "Upload many files and fit them (one sample per file: the "
                           "file's sample line or its stem; an existing sample of that name is "
                           "used). Unreadable files become failed items of the job.",
                "requestBody": {"required": True, "content": upload_body},
                "responses": {"202": _json(_ref("Accepted"), "Queued; poll the job"),
                              "400": _err("No file or invalid options"),
                              "413": _err("Over a limit (size, files, points)"),
                              "422": _err("No file could be read"), **busy, **write_errors}}},
            "/jobs/{job_id}": {"get": {
                "operationId": "getJob", "summary": "State and progress of a job",
                "parameters": [id_param("job_id", "job")],
                "responses": {"200": _json(_ref("Job"), "The job"),
                              "404": _err("No such job"), **auth_errors}}},
            "/fits/{fit_id}": {"get": {
                "operationId": "getFit", "summary": "A fit's result",
                "parameters": [id_param("fit_id", "fit")],
                "responses": {"200": _json(_ref("Fit"), "The result"),
                              "404": _err("No such fit"), **auth_errors}}},
            "/fits/{fit_id}/report": {"get": {
                "operationId": "getReport", "summary": "The interactive report of a fit",
                "parameters": [id_param("fit_id", "fit"),
                               {"name": "plotly", "in": "query", "schema": {
                                   "type": "string", "enum": ["inline", "app"]},
                                "description": "inline (default): a self-contained file; "
                                "app: plotly.js loaded from this server's /assets"}],
                "responses": {"200": {"description": "HTML", "content": {"text/html": {
                    "schema": {"type": "string"}}}},
                    "400": _err("Invalid parameter"), "404": _err("No such fit"),
                    **auth_errors}}},
            "/samples/{sample_id}/export": {"get": {
                "operationId": "exportSample",
                "summary": "Zip of a sample: raw files, fit JSON, reports, sample.json",
                "parameters": [id_param("sample_id", "sample")],
                "responses": {"200": {"description": "Zip archive", "content": {
                    "application/zip": {"schema": {"type": "string", "format": "binary"}}}},
                    "404": _err("No such sample"), **auth_errors}}},
            "/tokens": {
                "post": {
                    "operationId": "createToken",
                    "summary": "A new token for a person or instrument (admin only); the token "
                               "is in this answer only",
                    "requestBody": {"required": True, "content": {"application/json": {
                        "schema": {"type": "object", "required": ["name"],
                                   "additionalProperties": False, "properties": {
                                       "name": {"type": "string", "minLength": 1,
                                                "maxLength": 100, "pattern": r"\S"},
                                       "kind": {"type": "string", "enum": [
                                           "admin", "normal", "read-only"]}}}}}},
                    "responses": {"201": _json({"allOf": [_ref("Token"), {
                        "type": "object", "required": ["token"], "properties": {
                            "token": _TEXT}}]}, "Created"),
                        "400": _err("Invalid name or kind"), **admin_errors}},
                "get": {
                    "operationId": "listTokens", "summary": "Every token (admin only; never "
                    "the tokens themselves)",
                    "responses": {"200": _json({"type": "object", "required": ["tokens"],
                                                "properties": {"tokens": {
                                                    "type": "array", "items": _ref("Token")}}},
                                               "Tokens"), **admin_errors}}},
            "/tokens/{token_id}": {"delete": {
                "operationId": "revokeToken", "summary": "Revoke a token (admin only)",
                "parameters": [id_param("token_id", "token")],
                "responses": {"200": _json(_ref("Token"), "Revoked"),
                              "404": _err("No such active token"),
                              "409": _err("The last active admin token"), **admin_errors}}},
        },
    }
