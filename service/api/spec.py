"""The OpenAPI 3.1 document, generated from the calculations' marshmallow schemas."""

from __future__ import annotations

import json
import re
import threading
from collections import Counter

from apispec import APISpec
from apispec.ext.marshmallow import MarshmallowPlugin

from service.api.common import AT_EITHER_END
from service.api.declarations import Calculation
from service.api.fields import Option, Quantity, QuantityList, QuantityPerStage
from service.api.keys import API_KEY_HEADER, REALM
from service.api.spec_requests import assumed_schema, request_schema
from service.api.spec_texts import (
    CAUTION_POINTER,
    COLUMNS_REQUEST,
    DESCRIPTION,
    PROBLEMS,
    RESULT_AT_EITHER_END,
    TITLE,
    UNITS_DESCRIPTION,
)
from service.core.checks import COMPARISONS, STATUSES

#: The text bodies of the calculations, each a component every operation refers to.
TEXT_BODIES = {
    "CsvRows": "Rows as CSV (see CSV).",
    "CsvAnswer": "With `Accept: text/csv`: one line per case (see CSV).",
    "OutputText": "With one `output`: its value (see The GET form).",
}
#: The document's security requirement: an API key in its header or as a bearer token.
KEY_SCHEMES = [{"ApiKey": []}, {"BearerKey": []}]


def _number_schema(field: Quantity) -> dict:
    schema = {"type": "integer" if field.integer else "number"}
    if field.minimum is not None:
        schema["exclusiveMinimum" if field.exclusive_minimum else "minimum"] = field.minimum
    if field.maximum is not None:
        schema["exclusiveMaximum" if field.exclusive_maximum else "maximum"] = field.maximum
    return schema


def case_field_property(self, field, ret, **kwargs) -> dict:
    """apispec attribute function: the JSON Schema of the service's own input fields."""
    if not isinstance(field, Quantity | Option | QuantityList):
        return {}
    ret.pop("default", None) if ret.get("default") is None else None
    if isinstance(field, Quantity):
        schema = _number_schema(field)
    elif isinstance(field, Option):
        schema = {"type": "string", "enum": list(field.choices)}
    elif isinstance(field, QuantityPerStage):
        item = _number_schema(field.item)
        schema = {"oneOf": [item, {"type": "array", "items": item, "minItems": 1}]}
    else:
        schema = {"type": "array", "items": _number_schema(field.item), "minItems": 1}
    return schema


def build_spec(calculations: list[Calculation], version: str) -> dict:
    """The whole OpenAPI document as a dict.

    Every schema is written once: an input field or an output that two schemas share (two
    calculations' cases or results, a hub and a tip output) is one component they refer to (the
    first calculation's); one that a single case or result has is written in it.
    """
    plugin = MarshmallowPlugin()
    spec = APISpec(title=TITLE, version=version, openapi_version="3.1.0", plugins=[plugin],
                   info={"description": DESCRIPTION},
                   servers=[{"url": "/", "description": "The service that serves this document."}],
                   # Every calculation takes a key where keys are configured; the service paths say `[]`.
                   # The api_key query parameter is not declared as a scheme: it is off unless the
                   # operator enables it (see The GET form).
                   security=KEY_SCHEMES)
    plugin.converter.add_attribute_function(case_field_property)
    _add_common_components(spec)
    outputs: dict[str, str] = {}
    with _BUILDING:
        _FIELD_NAMES.clear()
        for calculation in calculations:
            _add_calculation(spec, plugin, calculation, outputs)
    _add_service_paths(spec)
    return _inline_single_use(spec.to_dict())


def _inline_single_use(document: dict) -> dict:
    """An input field's or an output's component that one schema alone refers to, written in that
    schema instead (a reference and a component name cost more than the schema they stand for)."""
    schemas = document["components"]["schemas"]
    uses = Counter(re.findall(r'"#/components/schemas/(\w*(?:Field|Output)_\w+)"', json.dumps(document)))
    single = {name for name, count in uses.items() if count == 1}
    for name, schema in schemas.items():
        properties = schema.get("properties", {}) if name.endswith(("Result", "Case")) else {}
        for member, prop in properties.items():
            target = prop.get("$ref", "").rsplit("/", 1)[-1]
            if target in single:
                properties[member] = schemas[target]
    for name in single:
        del schemas[name]
    return document


#: The component of each (calculation prefix, field name) of the document being built:
#: ``Field_{name}`` for the first calculation with that field, and every other whose field is the
#: same (the gas and inlet fields, stage-efficiency's flow fields); ``{prefix}Field_{name}`` for a
#: field of the same name and another schema. Filled by _field_components, read by
#: _field_component; build_spec holds _BUILDING meanwhile.
_FIELD_NAMES: dict[tuple[str, str], str] = {}
_BUILDING = threading.Lock()


def _field_components(spec: APISpec, plugin, prefix: str, calculation: Calculation) -> None:
    """One component per input field, so the case schema only references it. A field that an
    earlier calculation has already is that one's component."""
    written = spec.components.schemas
    for name, field in calculation._case_schema.fields.items():
        prop = plugin.converter.field2property(field)
        shared = f"Field_{name}"
        component = shared if written.get(shared, prop) == prop else f"{prefix}Field_{name}"
        _FIELD_NAMES[prefix, name] = component
        if component not in written:
            spec.components.schema(component, component=prop)


def _field_component(prefix: str, name: str) -> str:
    return _FIELD_NAMES[prefix, name]


def _ref(name: str) -> dict:
    return {"$ref": f"#/components/schemas/{name}"}




def _output_components(spec: APISpec, plugin, prefix: str, calculation: Calculation, known: dict[str, str]) -> dict:
    """A reference to one component per output, by output name: ``Output_{name}``. An output that an
    earlier calculation already has (stage-efficiency answers the triangles' outputs) refers to that one."""
    refs, props = {}, {}
    for name, field in calculation.outputs().fields.items():
        prop = plugin.converter.field2property(field)
        if prop.pop("x-per-stage", False):
            item = prop.get("type", "number")
            # Entries that may not apply (a rotor-frame value at a station without a rotor) are null.
            item = [item, "null"] if prop.pop("x-null-entries", False) else item
            prop = {**prop, "type": ["array", "null"], "items": {"type": item}}
        else:
            prop = {**prop, "type": [prop.get("type", "number"), "null"]}
        props[name] = prop
        base = name.removesuffix("_hub").removesuffix("_tip")
        if base in refs and prop == _at_either_end(props[base]):
            # The mean-line output at the hub or the tip: its component (the result says so once).
            refs[name] = refs[base]
            continue
        # A hub output and its tip output, described alike, are one component.
        shared = f"{base}_hub_or_tip" if base != name else name
        key = json.dumps([shared, prop], sort_keys=True)
        if key not in known:
            # The first calculation to answer an output names it; another with the same name
            # but another meaning is told apart by its calculation.
            taken = f"Output_{shared}" in known.values()
            known[key] = f"{prefix}Output_{shared}" if taken else f"Output_{shared}"
            spec.components.schema(known[key], component=prop)
        refs[name] = _ref(known[key])
    return refs


def _at_either_end(prop: dict) -> dict:
    """The schema of a mean-line output's hub or tip output, described as the mean-line one at either end."""
    text, unit = prop["description"].rsplit(" [", 1)
    return {**prop, "description": f"{text}{AT_EITHER_END} [{unit}"}


def _add_calculation(spec: APISpec, plugin, calculation: Calculation, known_outputs: dict[str, str]) -> None:
    prefix = "".join(part.capitalize() for part in calculation.name.replace("-", "_").split("_"))
    _field_components(spec, plugin, prefix, calculation)
    spec.components.schema(f"{prefix}Case", component=request_schema(
        calculation, lambda name: _ref(_field_component(prefix, name))))
    spec.components.schema(f"{prefix}OutputSelection", component=_selection_schema(calculation))
    selection = _ref(f"{prefix}OutputSelection")
    # Rows and columns are components of their own (not inline titled objects): client generators
    # name a model after it, and two calculations' inline "Rows" would be two models of one name.
    spec.components.schema(f"{prefix}RowsRequest", component={
        "type": "object", "description": "Rows: a list of cases.", "properties": {
            "cases": {"type": "array", "items": _ref(f"{prefix}Case"), "minItems": 1},
            "outputs": selection, "units": _ref("Units")},
        "required": ["cases"], "additionalProperties": False})
    shapes = [_ref(f"{prefix}Case"), _ref(f"{prefix}RowsRequest")]
    if calculation.columns:
        # The columns take the case's fields, each one value or a list (said once in ColumnValue and
        # Requests); their choices are the case's, case by case, written once in the case schema.
        spec.components.schema(f"{prefix}Columns", component={
            "type": "object", "description": f"The fields of {prefix}Case, each a ColumnValue.",
            "propertyNames": {"enum": list(calculation._columns_schema.fields)},
            "additionalProperties": _ref("ColumnValue"),
            "required": [name for name, f in calculation._columns_schema.fields.items() if f.required]})
        spec.components.schema(f"{prefix}ColumnsRequest", component={
            "type": "object", "description": "Columns: the cases' fields as lists (see Requests).",
            "properties": {"columns": _ref(f"{prefix}Columns"), "outputs": selection, "units": _ref("Units")},
            "required": ["columns"], "additionalProperties": False})
        shapes.append(_ref(f"{prefix}ColumnsRequest"))
    spec.components.schema(f"{prefix}Request", component={"oneOf": shapes})

    outputs = _output_components(spec, plugin, prefix, calculation, known_outputs)
    checks = {"type": "object", "description": "Rules of thumb the case was judged against.",
              "additionalProperties": _ref("Check")}
    assumed = assumed_schema(calculation)
    spec.components.schema(f"{prefix}Result", component={
        "type": "object", "description": "The answer of one case." + (
            RESULT_AT_EITHER_END if any(refs_name.endswith("_hub") and outputs[refs_name] == outputs.get(
                refs_name.removesuffix("_hub")) for refs_name in outputs) else ""),
        "properties": {**outputs, "checks": checks, **assumed}, "additionalProperties": False})
    spec.components.schema(f"{prefix}RowsResponse", component={
        "type": "object", "description": "The answer of rows: one result per case, in order.",
        "required": ["results", "errors"], "additionalProperties": False,
        "properties": {"results": {"type": "array", "items": _ref(f"{prefix}Result")},
                       "errors": {"type": "array", "items": _ref("CaseError")}}})
    # The one-case result last: none of its members is required, so a client that tries the
    # shapes in order would take any answer for it.
    responses = [_ref(f"{prefix}RowsResponse")]
    if calculation.columns:
        # Each output is the one-case output's list over the cases: said once, not per output.
        spec.components.schema(f"{prefix}ResultColumns", component={
            "type": "object", "description": f"Each output of {prefix}Result (the same names, units and meanings) "
                                             "as a list of one value per case, null where the case failed; a list "
                                             "output as a list of lists, each case's at its own length.",
            "properties": {"checks": {"type": "object", "additionalProperties": _ref("CheckColumns")},
                           **assumed_schema(calculation, True)},
            "additionalProperties": {"type": "array", "items": {}}})
        spec.components.schema(f"{prefix}ColumnsResponse", component={
            "type": "object", "description": "The answer of columns (see Requests).", "required": ["columns", "errors"],
            "additionalProperties": False,
            "properties": {"columns": _ref(f"{prefix}ResultColumns"),
                           "errors": {"type": "array", "items": _ref("CaseError")}}})
        responses.append(_ref(f"{prefix}ColumnsResponse"))
    responses.append(_ref(f"{prefix}Result"))
    spec.components.schema(f"{prefix}Response", component={"oneOf": responses})

    content = {"application/json": {"schema": _ref(f"{prefix}Response")}, "text/csv": {"schema": _ref("CsvAnswer")}}
    drawing = {}
    if calculation.render_svg is not None:
        content["image/svg+xml"] = {"schema": {
            "type": "string", "description": "With `Accept: image/svg+xml` and one case: an SVG drawing of it."}}
        drawing = {"406": "DrawingOfOneCase"}
    spec.path(path=calculation.path, operations={"get": _get_operation(prefix, calculation), "post": {
        "operationId": calculation.name.replace("-", "_"),
        "tags": [calculation.name],
        "summary": calculation.summary,
        "description": calculation.description + "\n\n" + CAUTION_POINTER,
        "parameters": [_output_parameter(prefix, "Outputs and checks to answer (as the body's `outputs`)."),
                       "units"],  # units: components/parameters/units
        "requestBody": {"required": True, "description": "One case, rows or columns (see Requests).", "content": {
            "application/json": {"schema": _ref(f"{prefix}Request")},
            "text/csv": {"schema": _ref("CsvRows")}}},
        "responses": {
            "200": {"description": "Results, in the shape of the request.", "content": content},
            **{status: name for status, name in sorted({**POST_PROBLEMS, **drawing}.items())},
        },
    }})


POST_PROBLEMS = {"400": "InvalidJson", "401": "KeyMissing", "403": "KeyInvalid", "408": "ReceiveTimeout",
                 "413": "TooLarge", "415": "UnsupportedBody", "422": "InvalidInput", "503": "Stopped"}
GET_PROBLEMS = {"400": "KeyInQuery", "401": "KeyMissing", "403": "KeyInvalid", "422": "InvalidInput",
                "503": "Stopped"}


def _add_common_components(spec: APISpec) -> None:
    keys_note = ("Required only where the operator has configured API keys (MEANLINE_API_KEYS or "
                 "MEANLINE_API_KEYS_FILE); without keys the service is open. No key: 401; a wrong key: 403.")
    spec.components.security_scheme("ApiKey", {
        "type": "apiKey", "in": "header", "name": API_KEY_HEADER,
        "description": f"An API key in the {API_KEY_HEADER} header. " + keys_note})
    spec.components.security_scheme("BearerKey", {
        "type": "http", "scheme": "bearer",
        "description": "The same API key as a bearer token: `Authorization: Bearer <key>`. " + keys_note})
    spec.components.schema("Problem", component={
        "type": "object",
        "description": "RFC 9457 problem details.",
        "required": ["type", "title", "status", "detail"],
        "properties": {
            "type": {"type": "string"},
            "title": {"type": "string"},
            "status": {"type": "integer"},
            "detail": {"type": "string"},
            "errors": {"type": "array", "items": {
                "type": "object", "required": ["pointer", "detail"],
                "properties": {"pointer": {"type": "string", "description": "JSON Pointer into the request body "
                                                                            "(for the GET form: into the one-case "
                                                                            "body that the query stands for)."},
                               "parameter": {"type": "string", "description": "The GET form's query parameter."},
                               "detail": {"type": "string"}}}},
            "errors_not_listed": {"type": "integer", "description": "Further errors not listed."},
            "request_id": {"type": "string", "description": (
                "Id of the request, also in the X-Request-ID response header and the service's log: the "
                "caller's X-Request-ID header if it is 1 to 128 letters, digits or ._~:/+=@- characters, "
                "otherwise a generated UUID.")},
        },
    })
    for name, description in TEXT_BODIES.items():
        spec.components.schema(name, component={"type": "string", "description": description})
    spec.components.schema("Units", component={"type": "string", "enum": ["si", "us"],
                                                "description": UNITS_DESCRIPTION})
    spec.components.parameter("units", "query", {
        "required": False, "description": "The unit system of the answer, as the body's `units`.",
        "schema": _ref("Units")})
    problem = {"content": {"application/problem+json": {"schema": _ref("Problem")}}}
    for name, description in PROBLEMS.items():
        headers = {}
        if name == "KeyMissing":
            headers = {"headers": {"WWW-Authenticate": {"description": "The scheme to authenticate with.", "schema": {
                "type": "string", "const": f'Bearer realm="{REALM}"'}}}}
        spec.components.response(name, {"description": description, **problem, **headers})
    spec.components.schema("ColumnValue", component={
        "description": COLUMNS_REQUEST, "oneOf": [
            {"type": ["number", "string"]},
            {"type": "array", "minItems": 1, "items": {"type": ["number", "string", "array"], "items": {}}}]})
    spec.components.schema("CaseError", component={
        "type": "object", "required": ["index", "detail"], "additionalProperties": False,
        "description": "A case of a batch that could not be computed; its outputs are null.",
        "properties": {"index": {"type": "integer", "minimum": 0}, "detail": {"type": "string"}},
    })
    number_or_list = {"oneOf": [{"type": ["number", "null"]}, {"type": "array", "items": {"type": "number"}}]}
    status_or_list = {"oneOf": [{"type": ["string", "null"], "enum": [*STATUSES, None]},
                                {"type": "array", "items": {"type": "string", "enum": list(STATUSES)}}]}
    check_properties = {
        "value": {**number_or_list, "description": "The judged value (one per stage for per-stage rules)."},
        "limit": {"type": "number", "description": "Boundary of the acceptable band."},
        "fail_limit": {"type": ["number", "null"], "description": "Harder boundary beyond which the status is fail."},
        "comparison": {"type": "string", "enum": list(COMPARISONS)},
        "status": {**status_or_list, "description": "ok, warn or fail; null for a case that failed."},
        "basis": {"type": "string", "description": "Published source of the limit, or common practice."},
    }
    spec.components.schema("Check", component={
        "type": "object", "required": list(check_properties), "additionalProperties": False,
        "properties": check_properties})
    spec.components.schema("CheckColumns", component={
        "type": "object", "required": list(check_properties), "additionalProperties": False,
        "description": "A Check judged on every case (each member as Check describes it): value and status per "
                       "case; limit, fail_limit, comparison and basis once when the whole batch shares them, else "
                       "per case.",
        "properties": {name: {"type": "array", "items": _undescribed(prop)} if name in ("value", "status") else
                       {"oneOf": [_undescribed(prop), {"type": "array", "items": _undescribed(prop)}]}
                       for name, prop in check_properties.items()}})


def _undescribed(schema: dict) -> dict:
    return {key: value for key, value in schema.items() if key != "description"}


def _add_service_paths(spec: APISpec) -> None:
    status = {"type": "object", "properties": {"status": {"type": "string"}}, "required": ["status"]}
    # Open to every caller (no key), which `security: []` says; a key in the query is refused here too.
    common = {"tags": ["service"], "security": []}
    refused = {"400": "KeyInQuery"}
    spec.path(path="/healthz", operations={"get": {
        "operationId": "health", "summary": "Liveness: the process answers.", **common,
        "responses": {"200": {"description": "Alive.", "content": {"application/json": {"schema": status}}},
                      **refused}}})
    spec.path(path="/readyz", operations={"get": {
        "operationId": "ready", "summary": "Readiness: the process computes a known case correctly.", **common,
        "responses": {"200": {"description": "Ready.", "content": {"application/json": {"schema": status}}},
                      **refused, "503": {"description": "Not ready.", "content": {
                          "application/problem+json": {"schema": _ref("Problem")}}}}}})
    spec.path(path="/metrics", operations={"get": {
        "operationId": "metrics", "summary": "Prometheus metrics of all workers, in the text exposition format.",
        **common,
        "responses": {"200": {"description": "Requests, latency, cases computed and per-case failures by endpoint.",
                              "content": {"text/plain": {"schema": {"type": "string"}}}}, **refused}}})
    spec.path(path="/v1/openapi.json", operations={"get": {
        "operationId": "openapi", "summary": "This OpenAPI document.", **common,
        "responses": {"200": {"description": "The OpenAPI 3.1 document.",
                              "content": {"application/json": {"schema": {"type": "object"}}}}, **refused}}})


def _selection_schema(calculation: Calculation) -> dict:
    # The names are listed (not only said to be the result's): validators and client generators
    # read an enum, not a sentence.
    return {"type": "array", "minItems": 1, "description": (
        "Answer only these outputs and checks: output names, `checks.NAME`, `checks.NAME.status` or "
        "`checks.NAME.value`."),
        "items": {"type": "string", "enum": list(calculation.outputs().fields)}}


def _output_parameter(prefix: str, description: str) -> dict:
    # The document lists the output names; the checks (their names depend on the input mode) are
    # accepted too, as the description says.
    return {"name": "output", "in": "query", "required": False, "style": "form", "explode": False,
            "description": description + " Comma-separated or repeated.",
            "schema": _ref(f"{prefix}OutputSelection")}


def _get_operation(prefix: str, calculation: Calculation) -> dict:
    """The GET form: the one-case body's fields as query parameters (one exploded object parameter
    of the case schema, so each field is described once, in the body)."""
    parameters = [{"name": "case", "in": "query", "required": True, "style": "form", "explode": True,
                   "description": "The one-case body's fields, one parameter each (see The GET form).",
                   "schema": _ref(f"{prefix}Case")}]
    parameters.append(_output_parameter(prefix, "Outputs and checks to answer; one name alone: a text/plain answer "
                                                "of its value."))
    parameters.append("units")  # components/parameters/units
    return {
        "operationId": calculation.name.replace("-", "_") + "_query",
        "tags": [calculation.name],
        "summary": calculation.summary + " (one case from the query)",
        "description": "One case from the query (see The GET form). " + CAUTION_POINTER,
        "parameters": parameters,
        "responses": {
            "200": {"description": "The answer of the one case.", "content": {
                "application/json": {"schema": _ref(f"{prefix}Result")},
                "text/plain": {"schema": _ref("OutputText")},
                "text/csv": {"schema": _ref("CsvAnswer")}}},
            **{status: name for status, name in GET_PROBLEMS.items()},
        },
    }


#: Objects and lists are written one member a line down to this depth (a component's or an
#: operation's members), unless they fit in TEXT_WIDTH characters; deeper ones are one line.
TEXT_EXPAND_DEPTH = 4
TEXT_WIDTH = 200


def document_text(document: dict) -> str:
    """The document as committed: one member a line down to a component's or an operation's
    members (a property, a parameter, a response a line), each of those on one compact line, and
    anything that fits in ``TEXT_WIDTH`` characters on one line.

    About as readable as indented JSON and under a tenth larger than compact JSON (``indent=2``
    would add a half).
    """
    def write(value, depth: int) -> str:
        line = json.dumps(value, ensure_ascii=False, separators=(",", ":"))
        if depth > TEXT_EXPAND_DEPTH or not isinstance(value, dict | list) or len(line) + depth <= TEXT_WIDTH:
            return line
        pad = "\n" + " " * (depth + 1)
        if isinstance(value, dict):
            members = [json.dumps(key, ensure_ascii=False) + ": " + write(item, depth + 1)
                       for key, item in value.items()]
            return "{" + pad + ("," + pad).join(members) + "\n" + " " * depth + "}"
        return "[" + pad + ("," + pad).join(write(item, depth + 1) for item in value) + "\n" + " " * depth + "]"

    return write(document, 0) + "\n"
