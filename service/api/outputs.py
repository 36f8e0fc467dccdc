"""Output selection: only the named outputs and checks of an answer, in every request shape.

A selection is a list of names, sent as ``"outputs": [...]`` beside the case, the ``cases`` or the
``columns`` of a JSON body, or as the query parameter ``output`` (repeated, or comma-separated).
Each name is

- an output of the calculation (``alpha1``): that output;
- ``checks.NAME``: that check's whole entry (a check and an output may share a name, such as
  ``de_haller_rotor``, so a check is always named with the prefix);
- ``checks.NAME.status`` or ``checks.NAME.value``: that check too (the part matters only where one
  value is answered, as ``text/plain``).

The answer keeps its shape and ``checks`` (holding only the named checks): it is the full answer
with everything else left out, and nothing is computed differently. A name that the calculation
does not know is a 422 naming it before anything is computed; a check that none of the request's
cases is judged by, once they are (check names depend on the input mode).
"""

from __future__ import annotations

from dataclasses import dataclass

from service.api.problems import invalid_input

#: The member of a JSON body, and the query parameter, that select outputs.
BODY_MEMBER = "outputs"
QUERY_PARAMETER = "output"
CHECK_PREFIX = "checks."
CHECK_PARTS = ("status", "value")


@dataclass(frozen=True)
class Selection:
    """What a request asked for, in its order.

    ``items`` holds ``(kind, name, part)``: kind ``"output"`` or ``"check"``, part ``None`` or one
    of :data:`CHECK_PARTS` (for a check named without a part: ``"status"``).
    """

    items: tuple[tuple[str, str, str | None], ...]
    parameter: str  # "outputs" (a body member) or "output" (a query parameter)

    @property
    def outputs(self) -> frozenset[str]:
        return frozenset(name for kind, name, _ in self.items if kind == "output")

    @property
    def checks(self) -> frozenset[str]:
        return frozenset(name for kind, name, _ in self.items if kind == "check")

    def error(self, position: int, detail: str) -> tuple:
        """An entry of a 422's ``errors``: the pointer into the body (``/outputs/i``), and for the
        query form the parameter's name too."""
        if self.parameter == QUERY_PARAMETER:
            return (f"/{BODY_MEMBER}/{position}", detail, QUERY_PARAMETER)
        return (f"/{BODY_MEMBER}/{position}", detail)


def output_names(calculation) -> tuple[str, ...]:
    return tuple(calculation.outputs().fields)


def parse(calculation, names, parameter: str = BODY_MEMBER) -> Selection:
    """The selection named by ``names`` (a list of strings).

    Raises
    ------
    Problem
        422 naming the member (or parameter) for anything but a non-empty list of known names.
    """
    where = (f"/{BODY_MEMBER}", "Must be a non-empty list of output or check names.")
    if parameter == QUERY_PARAMETER:
        where += (QUERY_PARAMETER,)
    if not isinstance(names, list) or not names or not all(isinstance(name, str) for name in names):
        raise invalid_input([where])
    known = output_names(calculation)
    items, errors = [], []
    selection = Selection((), parameter)
    for position, name in enumerate(names):
        name = name.strip()
        if name in known:
            items.append(("output", name, None))
        elif name.startswith(CHECK_PREFIX):
            check, _, part = name[len(CHECK_PREFIX):].partition(".")
            if not check or (part and part not in CHECK_PARTS):
                errors.append(selection.error(position, f"Not an output or check: {name!r}. A check is named "
                                                        "checks.NAME, checks.NAME.status or checks.NAME.value."))
            else:
                items.append(("check", check, part or "status"))
        else:
            errors.append(selection.error(position, f"Not an output of {calculation.name}: {name!r} (a check is "
                                                    f"named checks.NAME). Outputs: {', '.join(known)}."))
    if errors:
        raise invalid_input(errors)
    return Selection(tuple(items), parameter)


def check_known(calculation, selection: Selection, check_names: set[str]) -> None:
    """Raise a 422 for a name that is neither an output nor a check of this request's cases."""
    errors = []
    for position, (kind, name, _) in enumerate(selection.items):
        if kind == "check" and name not in check_names:
            checks = ", ".join(sorted(check_names)) or "none"
            errors.append(selection.error(position, (
                f"Not an output of {calculation.name}, nor a check of these cases: {name!r}. Checks here: "
                f"{checks}. Outputs: {', '.join(output_names(calculation))}.")))
    if errors:
        raise invalid_input(errors)


def restrict_outcomes(calculation, selection: Selection, outcomes: list) -> None:
    """Leave only the selected outputs and checks in a batch's outcomes (in place), after every
    case's failures were found from all of its outputs."""
    check_known(calculation, selection, {name for outcome in outcomes for name in outcome.checks})
    outputs, checks = selection.outputs, selection.checks
    for outcome in outcomes:
        outcome.values = {name: value for name, value in outcome.values.items() if name in outputs}
        outcome.checks = {name: check for name, check in outcome.checks.items() if name in checks}


def restrict_case(calculation, selection: Selection, body: dict) -> dict:
    """One case's answer with only the selected outputs and checks."""
    check_known(calculation, selection, set(body.get("checks", {})))
    outputs, checks = selection.outputs, selection.checks
    restricted = {name: value for name, value in body.items() if name in outputs}
    restricted["checks"] = {name: check for name, check in body.get("checks", {}).items() if name in checks}
    if "assumed" in body:  # what the case took as given stays with any selection
        restricted["assumed"] = body["assumed"]
    return restricted


def one_value(calculation, selection: Selection, body: dict):
    """The one selected value of one case's answer (for ``text/plain``).

    Raises
    ------
    Problem
        422 naming the parameter where the output is not computed for this case.
    """
    kind, name, part = selection.items[0]
    if kind == "output":
        if name not in body:
            raise invalid_input([selection.error(0, f"{name} is not computed for this case (its input mode "
                                                    "does not give it): see the calculation's description.")])
        return body[name]
    return body["checks"][name][part]


def take(payload):
    """Split a JSON body into its selection (the ``outputs`` member, or ``ABSENT``) and the request
    (``"outputs": null`` is a selection, and refused as one)."""
    if isinstance(payload, dict) and BODY_MEMBER in payload:
        payload = dict(payload)
        return payload.pop(BODY_MEMBER), payload
    return ABSENT, payload


#: What :func:`take` gives for a body without ``outputs``.
ABSENT = object()



