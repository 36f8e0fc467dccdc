"""The prose of the OpenAPI document: its description, the notes that hold for every calculation
(written once, as sections the operations name) and the problem answers' descriptions."""

from __future__ import annotations

from service.api import units

TITLE = "Meanline service"
CAUTION = (
    "Results are preliminary-design estimates from mean-radius methods and rules of thumb. They are "
    "to be confirmed by detailed analysis and test, under the codes and the licensed engineering "
    "practice that apply where the machine is built and run."
)
RESULT_AT_EITHER_END = (
    " An output suffixed `_hub` or `_tip` that refers to the component of the output without the suffix is "
    "that output at the hub or the tip radius (see the calculation's description).")
# The caution is written once, at the top of the document; each operation points at it.
CAUTION_POINTER = "Preliminary-design estimates: see the caution at the top of this document."
SELECTION_NOTE = (
    "One case, rows or columns. Beside the case's fields, the `cases` or the `columns`, `outputs` (a list of "
    "output names, `checks.NAME`, `checks.NAME.status` or `checks.NAME.value`) restricts the answer to those "
    "outputs and checks, and `units: \"us\"` answers in US customary units. Any input quantity may be a string "
    "with its unit (`\"30 mm\"`, `\"14.696 psi\"`), converted to the field's `x-unit`.")
UNITS_DESCRIPTION = (
    "`si` (the default) or `us`: every output in US customary units, by its `x-unit`: "
    + ", ".join(f"{si} as {us}" for si, (_, us) in units.US_UNITS.items() if us != si)
    + "; ratios and angles as they are. Check values are dimensionless and stay as they are.")
CSV_REQUEST = (
    "Rows as CSV (RFC 4180): a header line of field names, then one case a line; an empty cell leaves the field "
    "out; a list is one quoted cell of comma-separated numbers. Problems point at `/cases/i/field`: case i is "
    "line i + 2 of the file.")
CSV_ANSWER_NOTE = (
    "With `Accept: text/csv` the answer is a header line, then one line per case: `case`, each output (a list "
    "output as `NAME.0`, `NAME.1`, ...), each default taken as `assumed.NAME`, each check's status as "
    "`checks.NAME.status`, and `error` (why the case failed, else empty).")
GET_NOTE = (
    "The GET form of one case, for spreadsheet cells (WEBSERVICE) and plain URLs: the query holds the fields of "
    "a one-case body, one parameter each (a list comma-separated, repeated, or both). A value that is a JSON "
    "number is that number; any other value is a string (an option, or a quantity with its unit: `30 mm`). "
    "Validated and computed as the one-case body; each problem entry keeps the pointer into that body and names "
    "the `parameter`. With one `output` name the answer is `text/plain` holding that value (a list as values "
    "separated by commas); otherwise the JSON answer of one case, or CSV with `Accept: text/csv`. HEAD answers "
    "the same headers without the body; OPTIONS lists the methods. An API key may be sent as the query parameter "
    "`api_key`, for spreadsheet cells that cannot send a header, only where the operator allows it "
    "(MEANLINE_API_KEYS_IN_QUERY=1), since a key in a URL is seen by proxies, browser histories and logs; "
    "elsewhere that parameter is refused (400) on every path.")


COLUMNS_REQUEST = (
    "Each field one value, which broadcasts to every case, or a list with one entry per case; all such lists "
    "have one length, the case count. A field that takes a list in one case (one number per stage, such as "
    "`flow_coefficient`, `reaction` or `weights`) takes one value or list for every case, or a list of lists, "
    "one per case; the cases' lists may differ in length (cases of different stage counts), and the cases "
    "are then computed in groups of one length. `flow_coefficient` and `reaction` as a list of numbers give "
    "one number per case (for every stage of that case); `weights` as a list of numbers is every case's list."
)
COLUMNS_ANSWER = (
    "Each output a list with one entry per case, in request order. A per-stage, per-station or per-row output "
    "is a list of lists, one per case, each at that case's own length (ragged, not padded): exactly the list "
    "a rows answer gives the case; null for a case that failed, which `errors` names by its index. Check "
    "values and statuses per stage or row are laid out alike."
)


# The notes that hold for every calculation are written once, as sections of the document's
# description; the operations refer to them by their headings.
DESCRIPTION = (
    "Meanline (mean-radius) preliminary-design calculations of axial compressors and turbines. "
    "SI units throughout, angles in degrees from the axial direction, tangential quantities positive "
    "in the direction of rotor motion. Every calculation takes one case (an object), rows "
    "(`{\"cases\": [...]}`) or columns (`{\"columns\": {...}}`, a single value broadcasting to every "
    "case). In a batch, a physically impossible case gets null outputs and an entry in `errors`; "
    "malformed input fails the whole request with 422 and a JSON Pointer to every offending field.\n\n"
    + CAUTION
    + "\n\n## Requests\n\n" + SELECTION_NOTE + " " + COLUMNS_ANSWER
    + "\n\n## CSV\n\n" + CSV_REQUEST + " " + CSV_ANSWER_NOTE
    + "\n\n## The GET form\n\n" + GET_NOTE
)
#: The problem answers shared by the operations: components/responses (apispec writes an
#: operation's response given by name as a reference to it), by status.
PROBLEMS = {
    "InvalidJson": "The body is not valid JSON.",
    "KeyInQuery": "An api_key query parameter where keys in the query are not allowed.",
    "KeyMissing": "An API key is required and was not given.",
    "KeyInvalid": "The API key is not valid (every key sent must be).",
    "DrawingOfOneCase": "An SVG drawing was asked for rows or columns (it shows one case).",
    "ReceiveTimeout": "The request did not arrive within the receive timeout (MEANLINE_RECEIVE_TIMEOUT).",
    "TooLarge": "The body, the number of cases, or the memory the cases would take (MEANLINE_MAX_MEMORY; the "
                "detail says how many cases fit) is over the limit.",
    "UnsupportedBody": "The body is neither JSON nor CSV (Content-Type), or is encoded (Content-Encoding).",
    "InvalidInput": "Invalid input (every offending field named by JSON Pointer, and in the GET form by its "
                    "parameter), or one case that is physically impossible.",
    "Stopped": "The server stopped the request: over the time limit (MEANLINE_TIMEOUT), or shutting down.",
}
