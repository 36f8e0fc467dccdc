"""What a calculation endpoint declares: its fields, its input modes, its outputs and its core call.

A :class:`Calculation` is data: the mechanism (:mod:`service.api.calculation`) reads it to load,
validate, compute and lay out every request, and :mod:`service.api.spec` reads the same
declaration to write the OpenAPI document. Nothing here imports Flask.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

from marshmallow import Schema

from service.api.fields import CaseSchema, Option
from service.api.loading import load_plan
from service.core.cases import CaseResults


@dataclass(frozen=True)
class Mode:
    """One way of specifying a case: the fields it needs and the options it applies to.

    Parameters
    ----------
    name : str
        Short name, used in the OpenAPI component names.
    description : str
        What the caller gives in this mode, in words.
    required, optional : tuple of str
        Fields this mode needs, and fields only this mode accepts.
    when : mapping of str to tuple of str
        Option values this mode applies to, e.g. ``{"machine": ("compressor",)}``.
    """

    name: str
    description: str
    required: tuple[str, ...]
    optional: tuple[str, ...] = ()
    when: Mapping[str, tuple[str, ...]] = field(default_factory=dict)

    def applies(self, options: Mapping[str, str]) -> bool:
        return all(options.get(name) in values for name, values in self.when.items())

    def includes(self, part: str) -> bool:
        """Whether this mode is, or was combined from, the mode named ``part``."""
        return part in self.name.split("With")


def combine_modes(*dimensions: tuple[Mode, ...]) -> tuple[Mode, ...]:
    """Every combination of one mode from each dimension, e.g. (how the pitch is given) x
    (how the chord is given) x (which definition), as single modes named ``AWithBWithC``."""
    combined = [Mode("", "", ())]
    for dimension in dimensions:
        combined = [
            Mode(
                name=f"{a.name}With{b.name}" if a.name else b.name,
                description=f"{a.description}, with {b.description}" if a.description else b.description,
                required=a.required + b.required,
                optional=a.optional + b.optional,
                when={**a.when, **b.when},
            )
            for a in combined for b in dimension
            if all(a.when.get(k, v) == v for k, v in b.when.items())
        ]
    return tuple(combined)


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
    modes : tuple of Mode
        The ways of specifying a case; fields named by no mode are accepted in every mode.
    compute : callable
        ``compute(mode, options, inputs) -> CaseResults`` with ``inputs`` arrays of one length.
    together : tuple of tuple of str
        Fields that are given all together or not at all.
    requires : tuple of (str, str)
        ``(field, needed)``: ``field`` may be given only with ``needed`` (not the other way round).
    """

    name: str
    summary: str
    description: str
    schema: type[CaseSchema]
    outputs: type[Schema]
    modes: tuple[Mode, ...]
    compute: Callable[[Mode, dict[str, str], dict[str, Any]], CaseResults]
    together: tuple[tuple[str, ...], ...] = ()
    requires: tuple[tuple[str, str], ...] = ()
    columns: bool = True  # whether the columns request shape is offered
    # ``render_svg(payload, body) -> str``: a drawing of one case, answered for ``Accept: image/svg+xml``.
    render_svg: Callable[[dict, dict], str] | None = None

    def __post_init__(self):
        declared = set(self.schema().fields)
        for mode in self.modes:
            unknown = (set(mode.required) | set(mode.optional) | set(mode.when)) - declared
            if unknown:
                raise ValueError(f"mode {mode.name!r} of {self.name!r} names undeclared fields {sorted(unknown)}")
        # Built once: schema instances, field lookups and mode sets serve every request.
        case_schema, columns_schema = self.schema(), self.schema(columns=True)
        mode_fields = frozenset(f for mode in self.modes for f in (*mode.required, *mode.optional))
        built = {
            "_case_schema": case_schema,
            "_columns_schema": columns_schema,
            "_integer_outputs": frozenset(
                name for name, f in self.outputs().fields.items() if type(f).__name__ == "Integer"),
            "_mode_fields": mode_fields,
            "_option_fields": tuple(name for name, f in case_schema.fields.items() if isinstance(f, Option)),
            "_allowed": {mode.name: frozenset((set(case_schema.fields) - mode_fields) | set(mode.required)
                                              | set(mode.optional)) for mode in self.modes},
            "_plans": {id(case_schema): load_plan(case_schema), id(columns_schema): load_plan(columns_schema)},
            "_resolved": {},  # (fields given, option values) -> the one mode they resolve to
        }
        for name, value in built.items():
            object.__setattr__(self, name, value)

    @property
    def path(self) -> str:
        return f"/v1/{self.name}"

    @property
    def mode_fields(self) -> frozenset[str]:
        return self._mode_fields

    @property
    def option_fields(self) -> tuple[str, ...]:
        return self._option_fields

    def allowed_fields(self, mode: Mode) -> frozenset[str]:
        allowed = self._allowed.get(mode.name)
        if allowed is None:  # a mode that is not one of this calculation's
            allowed = frozenset((set(self._case_schema.fields) - self._mode_fields) | set(mode.required)
                                | set(mode.optional))
        return allowed
