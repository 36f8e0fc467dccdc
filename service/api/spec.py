"""The OpenAPI 3.1 document, generated from the calculations' marshmallow schemas."""

from __future__ import annotations

from apispec import APISpec
from apispec.ext.marshmallow import MarshmallowPlugin

from service.api import units
from service.api.declarations import Alternative, Calculation, Choice
from service.api.fields import Option, Quantity, QuantityList, QuantityPerStage
from service.api.keys import API_KEY_HEADER, REALM
from service.core.checks import COMPARISONS, STATUSES

TITLE = "Meanline service"
CAUTION = (
    "Results are preliminary-design estimates from mean-radius methods and rules of thumb. They are "
    "to be confirmed by detailed analysis and test, under the codes and the licensed engineering "
    "practice that apply where the machine is built and run."
)
DESCRIPTION = (
    "Meanline (mean-radius) preliminary-design calculations of axial compressors and turbines. "
    "SI units throughout, angles in degrees from the axial direction, tangential quantities positive "
    "in the direction of rotor motion. Every calculation takes one case (an object), rows "
    "(`{\"cases\": [...]}`) or columns (`{\"columns\": {...}}`, a single value broadcasting to every "
    "case). In a batch, a physically impossible case gets null outputs and an entry in `errors`; "
    "malformed input fails the whole request with 422 and a JSON Pointer to every offending field.\n\n"
    + CAUTION
)


def _number_schema(field: Quantity) -> dict:
    schema = {"type": "integer" if field.integer else "number"}
    if field.minimum is not None:
        schema["exclusiveMinimum" if field.exclusive_minimum else "minimum"] = field.minimum
    if field.maximum is not None:
        schema["exclusiveMaximum" if field.exclusive_maximum else "maximum"] = field.maximum
    return schema


def _one_or_column(schema: dict) -> dict:
    return {"oneOf": [schema, {"type": "array", "items": schema, "minItems": 1}]}


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
    columns = bool(getattr(field.parent, "columns", False))
    schema = _one_or_column(schema) if columns else schema
    unit = getattr(field, "unit", None) or getattr(getattr(field, "item", None), "unit", None)
    return {**schema, "x-unit-us": units.us_unit(unit)} if unit else schema


def build_spec(calculations: list[Calculation], version: str) -> dict:
    """The whole OpenAPI document as a dict."""
    plugin = MarshmallowPlugin()
    spec = APISpec(title=TITLE, version=version, openapi_version="3.1.0", plugins=[plugin],
                   info={"description": DESCRIPTION})
    plugin.converter.add_attribute_function(case_field_property)
    _add_common_components(spec)
    for calculation in calculations:
        _add_calculation(spec, plugin, calculation)
    _add_service_paths(spec)
    return spec.to_dict()


def _field_components(spec: APISpec, plugin, prefix: str, calculation: Calculation) -> None:
    """One component per input field and shape, so the mode schemas only reference them."""
    shapes = (("", calculation._case_schema), ("Column", calculation._columns_schema))
    for shape, schema in shapes if calculation.columns else shapes[:1]:
        for name, field in schema.fields.items():
            spec.components.schema(_field_component(prefix, name, shape),
                                   component=plugin.converter.field2property(field))


def _field_component(prefix: str, name: str, shape: str) -> str:
    return f"{prefix}{shape}Field_{name}"


def _request_schema(prefix: str, calculation: Calculation, shape: str) -> dict:
    """One object of every field, with one small ``oneOf`` per choice (``allOf`` of them)."""
    schema = calculation._columns_schema if shape else calculation._case_schema
    body = {"type": "object",
            "properties": {name: _ref(_field_component(prefix, name, shape)) for name in schema.fields},
            "required": [name for name, f in schema.fields.items() if f.required], "additionalProperties": False}
    constraints = [_choice_schema(calculation, choice, shape) for choice in calculation.choices]
    constraints += [need for choice in calculation.choices for alternative in choice.alternatives
                    for need in _needs_schemas(calculation, choice, alternative)]
    if constraints:
        body["allOf"] = constraints
    dependent = _dependent_required(calculation)
    if dependent:
        body["dependentRequired"] = dependent
    return body


def _dependent_required(calculation: Calculation) -> dict[str, list[str]]:
    """Fields given together, and fields given only with another."""
    dependent = {f: [g for g in group if g != f] for group in calculation.together for f in group}
    for field_name, needed in calculation.requires:
        dependent.setdefault(field_name, []).append(needed)
    return dependent


def _choice_schema(calculation: Calculation, choice: Choice, shape: str) -> dict:
    return {"description": f"`{choice.name}`: {choice.description}; give exactly one of these.",
            "oneOf": [_alternative_schema(calculation, choice, alternative, shape)
                      for alternative in choice.alternatives]}


def _alternative_schema(calculation: Calculation, choice: Choice, alternative: Alternative, shape: str) -> dict:
    """The alternative's own fields required, the other alternatives' fields absent and the option
    values it applies to (in columns one value or a list of them: a batch whose cases differ in an
    option that an alternative depends on is accepted by the service but not by this schema)."""
    schema = {"title": alternative.value, "description": f"Give {alternative.description}."}
    required = list(alternative.required)
    if alternative.when:
        fields = calculation._case_schema.fields
        schema["properties"] = {option: _option_values(list(values), shape)
                                for option, values in alternative.when.items()}
        required += [option for option, values in alternative.when.items() if fields[option].load_default not in values]
    if required:
        schema["required"] = required
    others = sorted(choice.fields - set(alternative.fields))
    if others:
        schema["not"] = {"anyOf": [{"required": [name]} for name in others]}
    return schema


def _option_values(values: list, shape: str) -> dict:
    return {"oneOf": [{"enum": values}, {"type": "array", "items": {"enum": values}}]} if shape else {"enum": values}


def _needs_schemas(calculation: Calculation, choice: Choice, alternative: Alternative) -> list[dict]:
    """Where an alternative is taken, one of the alternatives it needs of another choice is too."""
    schemas = []
    for other_name, values in alternative.needs.items():
        other = next(c for c in calculation.choices if c.name == other_name)
        condition = {"required": list(alternative.required)}
        others = sorted(choice.fields - set(alternative.fields))
        if others:
            condition["not"] = {"anyOf": [{"required": [name]} for name in others]}
        schemas.append({"if": condition, "then": {
            "description": f"{alternative.value} needs {other_name} " + " or ".join(values) + ".",
            "anyOf": [{"required": list(other.alternative(v).required)} for v in values]}})
    return schemas


def _ref(name: str) -> dict:
    return {"$ref": f"#/components/schemas/{name}"}


def _add_calculation(spec: APISpec, plugin, calculation: Calculation) -> None:
    prefix = "".join(part.capitalize() for part in calculation.name.replace("-", "_").split("_"))
    _field_components(spec, plugin, prefix, calculation)
    spec.components.schema(f"{prefix}Case", component=_request_schema(prefix, calculation, ""))
    if calculation.columns:
        spec.components.schema(f"{prefix}Columns", component=_request_schema(prefix, calculation, "Column"))
    selection = _selection_schema(calculation)
    shapes = [
        _ref(f"{prefix}Case"),
        {"type": "object", "title": "Rows", "properties": {
            "cases": {"type": "array", "items": _ref(f"{prefix}Case"), "minItems": 1}, "outputs": selection,
            "units": UNITS_MEMBER},
         "required": ["cases"], "additionalProperties": False},
    ]
    if calculation.columns:
        shapes.append({"type": "object", "title": "Columns", "properties": {"columns": _ref(f"{prefix}Columns"),
                                                                            "outputs": selection,
                                                                            "units": UNITS_MEMBER},
                       "required": ["columns"], "additionalProperties": False})
    spec.components.schema(f"{prefix}Request", component={"oneOf": shapes})

    outputs = {}
    for name, field in calculation.outputs().fields.items():
        prop = plugin.converter.field2property(field)
        if "x-unit" in prop:  # the unit of answers asked for with units=us
            prop["x-unit-us"] = units.us_unit(prop["x-unit"])
        if prop.pop("x-per-stage", False):
            item = prop.get("type", "number")
            # Entries that may not apply (a rotor-frame value at a station without a rotor) are null.
            item = [item, "null"] if prop.pop("x-null-entries", False) else item
            outputs[name] = {**prop, "type": ["array", "null"], "items": {"type": item}}
        else:
            outputs[name] = {**prop, "type": [prop.get("type", "number"), "null"]}
    checks = {"type": "object", "description": "Rules of thumb the case was judged against.",
              "additionalProperties": _ref("Check")}
    spec.components.schema(f"{prefix}Result", component={
        "type": "object", "properties": {**outputs, "checks": checks}, "additionalProperties": False})
    responses = [
        _ref(f"{prefix}Result"),
        {"type": "object", "title": "Rows", "required": ["results", "errors"], "additionalProperties": False,
         "properties": {"results": {"type": "array", "items": _ref(f"{prefix}Result")},
                        "errors": {"type": "array", "items": _ref("CaseError")}}},
    ]
    if calculation.columns:
        column_outputs = {name: {"type": "array", "items": prop, "description": prop.get("description", "")}
                          for name, prop in outputs.items()}
        spec.components.schema(f"{prefix}ResultColumns", component={
            "type": "object", "properties": {**column_outputs, "checks": {
                "type": "object", "additionalProperties": _ref("CheckColumns")}},
            "additionalProperties": False})
        responses.append(
            {"type": "object", "title": "Columns", "required": ["columns", "errors"], "additionalProperties": False,
             "properties": {"columns": _ref(f"{prefix}ResultColumns"),
                            "errors": {"type": "array", "items": _ref("CaseError")}}})
    spec.components.schema(f"{prefix}Response", component={"oneOf": responses})

    problem = {"content": {"application/problem+json": {"schema": _ref("Problem")}}}
    content = {"application/json": {"schema": _ref(f"{prefix}Response")}, "text/csv": CSV_ANSWER}
    drawing = {}
    if calculation.render_svg is not None:
        content["image/svg+xml"] = {"schema": {
            "type": "string", "description": "With `Accept: image/svg+xml` and one case: an SVG drawing of it."}}
        drawing = {"406": {"description": "An SVG drawing was asked for rows or columns (it shows one case).",
                           **problem}}
    spec.path(path=calculation.path, operations={"get": _get_operation(plugin, prefix, calculation), "post": {
        "operationId": calculation.name.replace("-", "_"),
        "tags": [calculation.name],
        "summary": calculation.summary,
        "description": calculation.description + "\n\n" + CAUTION,
        "security": [{"ApiKey": []}, {"BearerKey": []}],
        "parameters": [_output_parameter(calculation, "Outputs and checks to answer (as the body's `outputs`)."),
                       UNITS_PARAMETER],
        "requestBody": {"required": True, "description": SELECTION_NOTE, "content": {
            "application/json": {"schema": _ref(f"{prefix}Request")},
            "text/csv": {"schema": {"type": "string", "description": CSV_REQUEST}}}},
        "responses": {
            "200": {"description": "Results, in the shape of the request.", "content": content},
            "400": {"description": "The body is not valid JSON.", **problem},
            "401": {"description": "An API key is required and was not given.", **problem, "headers": {
                "WWW-Authenticate": {"description": "The scheme to authenticate with.",
                                     "schema": {"type": "string", "const": f'Bearer realm="{REALM}"'}}}},
            "403": {"description": "The API key is not valid (every key sent must be).", **problem},
            "408": {"description": "The request did not arrive within the receive timeout "
                                   "(MEANLINE_RECEIVE_TIMEOUT).", **problem},
            "413": {"description": "The body, the number of cases, or the memory the cases would take "
                                   "(MEANLINE_MAX_MEMORY; the detail says how many cases fit) is over the limit.",
                    **problem},
            **drawing,
            "415": {"description": "The body is neither JSON nor CSV (Content-Type), or is encoded "
                                   "(Content-Encoding).", **problem},
            "422": {"description": "Invalid input (every offending field named by JSON Pointer), or one "
                                   "case that is physically impossible.", **problem},
            "503": {"description": "The server stopped the request: over the time limit (MEANLINE_TIMEOUT), "
                                   "or shutting down.", **problem},
        },
    }})


def _add_common_components(spec: APISpec) -> None:
    keys_note = ("Required only where the operator has configured API keys (MEANLINE_API_KEYS or "
                 "MEANLINE_API_KEYS_FILE); without keys the service is open. No key: 401; a wrong key: 403.")
    spec.components.security_scheme("ApiKey", {
        "type": "apiKey", "in": "header", "name": API_KEY_HEADER,
        "description": f"An API key in the {API_KEY_HEADER} header. " + keys_note})
    spec.components.security_scheme("ApiKeyQuery", {
        "type": "apiKey", "in": "query", "name": "api_key",
        "description": "The API key as the query parameter api_key, for spreadsheet cells that cannot send a "
                       "header: accepted only where the operator sets MEANLINE_API_KEYS_IN_QUERY=1, since a key "
                       "in a URL is seen by proxies, browser histories and logs. " + keys_note})
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
        "description": "A rule judged on every case: value and status per case; limit, fail_limit, comparison "
                       "and basis once when the whole batch shares them, else per case.",
        "properties": {name: ({"type": "array", "items": {k: v for k, v in prop.items() if k != "description"}}
                              if name in ("value", "status") else
                              {"oneOf": [prop, {"type": "array", "items": prop}]})
                       for name, prop in check_properties.items()}})


def _add_service_paths(spec: APISpec) -> None:
    status = {"type": "object", "properties": {"status": {"type": "string"}}, "required": ["status"]}
    problem = {"content": {"application/problem+json": {"schema": _ref("Problem")}}}
    spec.path(path="/healthz", operations={"get": {
        "operationId": "health", "summary": "Liveness: the process answers.", "tags": ["service"],
        "responses": {"200": {"description": "Alive.", "content": {"application/json": {"schema": status}}}}}})
    spec.path(path="/readyz", operations={"get": {
        "operationId": "ready", "summary": "Readiness: the process computes a known case correctly.",
        "tags": ["service"],
        "responses": {"200": {"description": "Ready.", "content": {"application/json": {"schema": status}}},
                      "503": {"description": "Not ready.", **problem}}}})
    spec.path(path="/metrics", operations={"get": {
        "operationId": "metrics", "summary": "Prometheus metrics of all workers, in the text exposition format.",
        "tags": ["service"],
        "responses": {"200": {"description": "Requests, latency, cases computed and per-case failures by endpoint.",
                              "content": {"text/plain": {"schema": {"type": "string"}}}}}}})
    spec.path(path="/v1/openapi.json", operations={"get": {
        "operationId": "openapi", "summary": "This OpenAPI document.", "tags": ["service"],
        "responses": {"200": {"description": "The OpenAPI 3.1 document.",
                              "content": {"application/json": {"schema": {"type": "object"}}}}}}})


SELECTION_NOTE = (
    "One case, rows or columns. Beside the case's fields, the `cases` or the `columns`, `outputs` (a list of "
    "output names, `checks.NAME`, `checks.NAME.status` or `checks.NAME.value`) restricts the answer to those "
    "outputs and checks, and `units: \"us\"` answers in US customary units. Any input quantity may be a string "
    "with its unit (`\"30 mm\"`, `\"14.696 psi\"`), converted to the field's `x-unit`.")
UNITS_DESCRIPTION = (
    "`si` (the default) or `us`: every output in US customary units, the unit of each given as `x-unit-us` in "
    "this document (ft, ft s^-1, degR, lbf in^-2, lb s^-1, Btu lb^-1, hp, ...); check values are dimensionless "
    "and stay as they are.")
UNITS_MEMBER = {"type": "string", "enum": ["si", "us"], "description": UNITS_DESCRIPTION}
UNITS_PARAMETER = {"name": "units", "in": "query", "required": False, "description": UNITS_DESCRIPTION,
                   "schema": {"type": "string", "enum": ["si", "us"]}}
CSV_REQUEST = (
    "Rows as CSV (RFC 4180): a header line of field names, then one case a line; an empty cell leaves the field "
    "out; a list is one quoted cell of comma-separated numbers. Problems point at `/cases/i/field`: case i is "
    "line i + 2 of the file.")
CSV_ANSWER = {"schema": {"type": "string", "description": (
    "With `Accept: text/csv`: a header line, then one line per case: `case`, each output (a list output as "
    "`NAME.0`, `NAME.1`, ...), each check's status as `checks.NAME.status`, and `error` (why the case failed, "
    "else empty).")}}
GET_NOTE = (
    "The GET form of one case, for spreadsheet cells (WEBSERVICE) and plain URLs: the query holds the fields of "
    "a one-case body, one parameter each (a list comma-separated, repeated, or both). A value that is a JSON "
    "number is that number; any other value is a string (an option, or a quantity with its unit: `30 mm`). "
    "Validated and computed as the one-case body; each problem entry keeps the pointer into that body and names "
    "the `parameter`. With one `output` name the answer is `text/plain` holding that value (a list as values "
    "separated by commas); otherwise the JSON answer of one case, or CSV with `Accept: text/csv`. HEAD answers "
    "the same headers without the body; OPTIONS lists the methods. An API key may be sent as `api_key` only "
    "where the operator allows it (MEANLINE_API_KEYS_IN_QUERY=1); elsewhere that parameter is refused (400).")


def _selection_schema(calculation: Calculation) -> dict:
    return {"type": "array", "minItems": 1, "description": (
        "Answer only these outputs and checks: output names, `checks.NAME`, `checks.NAME.status` or "
        "`checks.NAME.value`."),
        "items": {"type": "string", "enum": list(calculation.outputs().fields)}}


def _output_parameter(calculation: Calculation, description: str) -> dict:
    # The document lists the output names; the checks (their names depend on the input mode) are
    # accepted too, as the description says.
    return {"name": "output", "in": "query", "required": False, "style": "form", "explode": False,
            "description": description + " Comma-separated or repeated: output names, or checks.NAME, "
                                         "checks.NAME.status, checks.NAME.value.",
            "schema": {"type": "array", "minItems": 1,
                       "items": {"type": "string", "enum": list(calculation.outputs().fields)}}}


def _get_operation(plugin, prefix: str, calculation: Calculation) -> dict:
    """The GET form: one query parameter per input field, from the same schema fields as the body."""
    problem = {"content": {"application/problem+json": {"schema": _ref("Problem")}}}
    parameters = []
    for name, field in calculation._case_schema.fields.items():
        prop = plugin.converter.field2property(field)
        parameter = {"name": name, "in": "query", "required": bool(field.required),
                     "description": prop.get("description", ""), "schema": prop}
        if prop.get("type") == "array" or "oneOf" in prop:
            parameter.update(style="form", explode=True)
        parameters.append(parameter)
    parameters.append(_output_parameter(calculation, "With one name: a text/plain answer of that one value."))
    parameters.append(UNITS_PARAMETER)
    return {
        "operationId": calculation.name.replace("-", "_") + "_query",
        "tags": [calculation.name],
        "summary": calculation.summary + " (one case from the query)",
        "description": GET_NOTE + "\n\n" + CAUTION,
        # Not ApiKeyQuery: that scheme is off unless the operator enables it (see its description).
        "security": [{"ApiKey": []}, {"BearerKey": []}],
        "parameters": parameters,
        "responses": {
            "200": {"description": "The answer of the one case.", "content": {
                "application/json": {"schema": _ref(f"{prefix}Result")},
                "text/plain": {"schema": {"type": "string", "description": "With one `output`: its value."}},
                "text/csv": CSV_ANSWER}},
            "400": {"description": "An api_key parameter where keys in the query are not allowed.", **problem},
            "401": {"description": "An API key is required and was not given.", **problem, "headers": {
                "WWW-Authenticate": {"description": "The scheme to authenticate with.",
                                     "schema": {"type": "string", "const": f'Bearer realm="{REALM}"'}}}},
            "403": {"description": "The API key is not valid.", **problem},
            "422": {"description": "Invalid input (every offending parameter named), or a case that is physically "
                                   "impossible.", **problem},
            "503": {"description": "The server stopped the request.", **problem},
        },
    }
