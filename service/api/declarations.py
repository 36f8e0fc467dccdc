"""What a calculation endpoint declares: its fields, its input modes, its outputs and its core call.

A :class:`Calculation` is data: the mechanism (:mod:`service.api.calculation`) reads it to load,
validate, compute and lay out every request, and :mod:`service.api.spec` reads the same
declaration to write the OpenAPI document. Nothing here imports Flask.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from itertools import combinations, product
from typing import Any

from marshmallow import Schema

from service.api.fields import CaseSchema, Option
from service.api.loading import load_plan
from service.core.cases import CaseResults


@dataclass(frozen=True)
class Alternative:
    """One way of making a choice: the fields it takes and the option values it applies to.

    Parameters
    ----------
    value : str
        Its name within the choice (snake_case), as the OpenAPI document shows it.
    description : str
        What the caller gives for it, in words ("hub_radius and tip_radius").
    required, optional : tuple of str
        Fields it needs, and fields it accepts beside them. A field named by some alternative of a
        choice is refused where the alternative taken does not name it.
    when : mapping of str to tuple of str
        Option values it applies to, e.g. ``{"machine": ("compressor",)}``.
    needs : mapping of str to tuple of str
        Alternatives of other choices it needs, e.g. ``{"radius": ("mean_radius", "hub_and_tip")}``
        for blade counts that need a radius.
    """

    value: str
    description: str
    required: tuple[str, ...] = ()
    optional: tuple[str, ...] = ()
    when: Mapping[str, tuple[str, ...]] = field(default_factory=dict)
    needs: Mapping[str, tuple[str, ...]] = field(default_factory=dict)

    @property
    def fields(self) -> tuple[str, ...]:
        return self.required + self.optional

    def applies(self, options: Mapping[str, str]) -> bool:
        return all(options.get(name) in values for name, values in self.when.items())


@dataclass(frozen=True)
class Choice:
    """An independent choice of how a case is given (which radius is held, how rows are sized, ...).

    Each case takes exactly one of its alternatives, found from the fields given and the options;
    choices are resolved one by one, so that n choices of k alternatives are declared with n k
    alternatives rather than k^n combinations.
    """

    name: str
    description: str
    alternatives: tuple[Alternative, ...]

    @property
    def fields(self) -> frozenset[str]:
        return frozenset(f for alternative in self.alternatives for f in alternative.fields)

    def alternative(self, value: str) -> Alternative:
        return next(a for a in self.alternatives if a.value == value)


@dataclass(frozen=True)
class Default:
    """A value assumed for a field the caller leaves out, echoed in the answer's ``assumed``.

    Parameters
    ----------
    value : float or str
        The value assumed.
    basis : str
        Why: "common practice" with its usual range, or the source.
    when : mapping of str to tuple of str
        Option values it applies to (a field may have one default per machine).
    """

    value: float | str
    basis: str
    when: Mapping[str, tuple[str, ...]] = field(default_factory=dict)

    def applies(self, options: Mapping[str, str]) -> bool:
        return all(options.get(name) in values for name, values in self.when.items())


@dataclass(frozen=True)
class Form:
    """One complete way of giving a case: an alternative of every choice (for tests and examples;
    the mechanism resolves choices one by one and never builds these)."""

    taken: Mapping[str, Alternative]

    @property
    def name(self) -> str:
        return ",".join(f"{choice}={a.value}" for choice, a in self.taken.items()) or "plain"

    @property
    def required(self) -> tuple[str, ...]:
        return tuple(f for a in self.taken.values() for f in a.required)

    @property
    def optional(self) -> tuple[str, ...]:
        return tuple(f for a in self.taken.values() for f in a.optional)

    @property
    def when(self) -> dict[str, tuple[str, ...]]:
        return {k: v for a in self.taken.values() for k, v in a.when.items()}

    def applies(self, options: Mapping[str, str]) -> bool:
        return all(a.applies(options) for a in self.taken.values())

    def includes(self, value: str) -> bool:
        """Whether this form takes the alternative ``value`` (or ``"choice=value"``)."""
        return any(value in (a.value, f"{choice}={a.value}") for choice, a in self.taken.items())


@dataclass(frozen=True)
class Calculation:
    """A calculation endpoint, ``POST /v1/<name>``.

    Parameters
    ----------
    name : str
        URL segment and OpenAPI tag.
    summary, description : str
        For the OpenAPI document.
    schema : type of CaseSchema
        Every input field.
    outputs : type of Schema
        Every output field, for the documentation and for integer formatting.
    choices : tuple of Choice
        The independent choices of how a case is given; fields named by no choice are accepted in
        every case.
    compute : callable
        ``compute(options, inputs) -> CaseResults`` with ``inputs`` arrays of one length: a call of
        the core with the fields given (an absent field is absent from ``inputs``).
    together : tuple of tuple of str
        Fields that are given all together or not at all.
    requires : tuple of (str, str)
        ``(field, needed)``: ``field`` may be given only with ``needed`` (not the other way round).
    defaults : mapping of str to tuple of Default
        Values assumed for fields left out (the first that applies to the options). A field of a
        choice with a default counts as given when its alternative is judged, so that a choice left
        out takes the alternative its defaults complete. A calculation that declares defaults
        answers ``assumed``: every default it used, these and its fields' own (options included).
    """

    name: str
    summary: str
    description: str
    schema: type[CaseSchema]
    outputs: type[Schema]
    choices: tuple[Choice, ...]
    compute: Callable[[dict[str, str], dict[str, Any]], CaseResults]
    together: tuple[tuple[str, ...], ...] = ()
    requires: tuple[tuple[str, str], ...] = ()
    defaults: Mapping[str, tuple[Default, ...]] = field(default_factory=dict)
    columns: bool = True  # whether the columns request shape is offered
    # ``render_svg(payload, body) -> str``: a drawing of one case, answered for ``Accept: image/svg+xml``.
    render_svg: Callable[[dict, dict], str] | None = None

    def __post_init__(self):
        self._check_declaration()
        # Built once: schema instances, field lookups and load plans serve every request.
        case_schema, columns_schema = self.schema(), self.schema(columns=True)
        built = {
            "_case_schema": case_schema,
            "_columns_schema": columns_schema,
            "_integer_outputs": frozenset(
                name for name, f in self.outputs().fields.items() if type(f).__name__ == "Integer"),
            "_choice_fields": frozenset(f for choice in self.choices for f in choice.fields),
            "_option_fields": tuple(name for name, f in case_schema.fields.items() if isinstance(f, Option)),
            "restricting_options": frozenset(
                name for choice in self.choices for a in choice.alternatives for name in a.when),
            "_plans": {id(case_schema): load_plan(case_schema), id(columns_schema): load_plan(columns_schema)},
            "_resolved": {},  # (fields given, option values) -> the alternative of each choice
        }
        for name, value in built.items():
            object.__setattr__(self, name, value)

    def _check_declaration(self) -> None:
        """ValueError for a declaration that names fields or choices it does not have, or shares a
        field between two choices (each field belongs to at most one)."""
        declared = set(self.schema().fields)
        names = {choice.name for choice in self.choices}
        for choice in self.choices:
            for alternative in choice.alternatives:
                unknown = (set(alternative.fields) | set(alternative.when) | set(self.defaults)) - declared
                unknown |= set(alternative.needs) - names
                if unknown:
                    raise ValueError(f"{choice.name}={alternative.value} of {self.name!r} names undeclared fields "
                                     f"or choices {sorted(unknown)}")
        shared = [f for a, b in combinations(self.choices, 2) for f in a.fields & b.fields]
        if shared:
            raise ValueError(f"fields {sorted(shared)} of {self.name!r} belong to more than one choice")

    @property
    def path(self) -> str:
        return f"/v1/{self.name}"

    def default(self, name: str, options: Mapping[str, str]) -> Default | None:
        """The default of field ``name`` that applies to ``options``, if any."""
        return next((d for d in self.defaults.get(name, ()) if d.applies(options)), None)

    @property
    def choice_fields(self) -> frozenset[str]:
        """Every field that some alternative of some choice names."""
        return self._choice_fields

    @property
    def option_fields(self) -> tuple[str, ...]:
        return self._option_fields

    def allowed_fields(self, form: Form) -> frozenset[str]:
        """The fields a case of ``form`` may give."""
        return self.allowed_fields_of(form.taken)

    def choice(self, name: str) -> Choice:
        """The choice named ``name``."""
        return next(c for c in self.choices if c.name == name)

    def allowed_fields_of(self, taken: Mapping[str, Alternative]) -> frozenset[str]:
        """The fields a case may give with the alternatives ``taken`` (choice name -> alternative)."""
        return frozenset((set(self._case_schema.fields) - self._choice_fields)
                         | {f for alternative in taken.values() for f in alternative.fields})

    @property
    def forms(self) -> tuple[Form, ...]:
        """Every complete, consistent way of giving a case (one alternative per choice whose option
        values agree and whose needs are met), for tests and examples."""
        forms = []
        for picked in product(*(choice.alternatives for choice in self.choices)):
            taken = dict(zip((choice.name for choice in self.choices), picked, strict=True))
            when: dict[str, tuple[str, ...]] = {}
            consistent = True
            for alternative in picked:
                for option, values in alternative.when.items():
                    common = tuple(v for v in when.get(option, values) if v in values)
                    consistent &= bool(common)
                    when[option] = common
                consistent &= all(taken[other].value in values for other, values in alternative.needs.items())
            if consistent:
                forms.append(Form(taken))
        return tuple(forms)
