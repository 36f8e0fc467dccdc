"""Input fields that accept one case or a whole column of cases.

A calculation's schema is declared once with these fields. Loaded with ``columns=False``
each field takes one JSON value; with ``columns=True`` a field takes either one value (which
broadcasts to every case) or a list with one value per case, converted to a numpy array and
checked as a whole, so a column of 100,000 numbers costs a few milliseconds, not a Python
loop through per-item fields.
"""

from __future__ import annotations

import math

import numpy as np
from marshmallow import Schema, ValidationError, fields

from service.api import units

_NUMBER_TYPES = (int, float)


def _is_number(value) -> bool:
    return type(value) in _NUMBER_TYPES


class CaseSchema(Schema):
    """Base of every calculation's input schema.

    Parameters
    ----------
    columns : bool
        Load columns (each field a value or a list of values) instead of one case.
    """

    class Meta:
        unknown = "raise"

    def __init__(self, *args, columns: bool = False, **kwargs):
        super().__init__(*args, **kwargs)
        self.columns = columns


class _CaseField(fields.Field):
    """A field that knows whether its schema loads one case or columns."""

    def __init__(self, *args, **kwargs):
        # marshmallow lets null through wherever load_default is None (optional cp, gamma); the
        # documented type is a number, and an omitted field already means "use the default".
        kwargs.setdefault("allow_none", False)
        super().__init__(*args, **kwargs)

    def _loads_columns(self) -> bool:
        return bool(getattr(self.parent, "columns", False))

    def _deserialize(self, value, attr, data, **kwargs):
        if self._loads_columns() and isinstance(value, np.ndarray):
            return self._load_array(value)
        if self._loads_columns() and isinstance(value, list):
            if not value:
                raise ValidationError("A column must hold at least one value.")
            return self._load_column(value)
        return self._load_one(value)

    def column_length(self, value) -> int | None:
        """How many cases a value of this field in columns holds: a list's length, None for one
        value that broadcasts to every case."""
        return len(value) if isinstance(value, list | np.ndarray) else None

    def _load_one(self, value):
        raise NotImplementedError

    def _load_column(self, values: list):
        raise NotImplementedError

    def _load_array(self, array: np.ndarray):
        """A column of JSON numbers that the parser read as a float64 array (see
        :mod:`service.api.jsonparse`): loaded as the list of floats it stands for."""
        return self._load_column(array.tolist())


class Quantity(_CaseField):
    """A finite real number with a unit and an allowed range.

    Parameters
    ----------
    description : str
        What the quantity is, ending in its unit in brackets, e.g. ``Axial chord. [m]``.
    unit : str
        The unit as written in the ``x-unit`` extension of the OpenAPI document.
    minimum, maximum : float, optional
        Bounds of the allowed range.
    exclusive_minimum, exclusive_maximum : bool
        Whether the bound itself is excluded.
    integer : bool
        Accept only whole numbers (a whole-valued float such as ``45.0`` is accepted).
    """

    def __init__(
        self,
        description: str,
        unit: str,
        *,
        minimum: float | None = None,
        maximum: float | None = None,
        exclusive_minimum: bool = False,
        exclusive_maximum: bool = False,
        integer: bool = False,
        **kwargs,
    ):
        metadata = {"description": description, "x-unit": unit, **kwargs.pop("metadata", {})}
        # A number is never null, even where the field is optional (marshmallow would allow null
        # for a field whose default is None).
        kwargs.setdefault("allow_none", False)
        super().__init__(metadata=metadata, **kwargs)
        if integer and maximum is None:
            # Past 2**53 a double no longer holds every whole number (2**53 + 1 would read as 2**53),
            # and a column of larger counts wraps round when cast to int64 (1e300 blades became a
            # negative count).
            maximum = 2**53 - 1
        self.unit = unit
        self.minimum = minimum
        self.maximum = maximum
        self.exclusive_minimum = exclusive_minimum
        self.exclusive_maximum = exclusive_maximum
        self.integer = integer

    @property
    def range_text(self) -> str:
        parts = []
        if self.minimum is not None:
            parts.append(f"{'greater than' if self.exclusive_minimum else 'at least'} {self.minimum:g}")
        if self.maximum is not None:
            parts.append(f"{'less than' if self.exclusive_maximum else 'at most'} {self.maximum:g}")
        return " and ".join(parts)

    def _out_of_range(self, array: np.ndarray) -> np.ndarray:
        bad = ~np.isfinite(array)
        if self.minimum is not None:
            bad |= (array <= self.minimum) if self.exclusive_minimum else (array < self.minimum)
        if self.maximum is not None:
            bad |= (array >= self.maximum) if self.exclusive_maximum else (array > self.maximum)
        if self.integer:
            bad |= np.isfinite(array) & (array != np.round(array))
        return bad

    def _range_message(self, value: float) -> str:
        if not np.isfinite(value):
            return "Must be a finite number."
        if self.integer and value != round(value):
            return "Must be a whole number."
        return f"Must be {self.range_text}."

    def _in_range(self, number: float) -> bool:
        """:meth:`_out_of_range` for one number, in plain Python (numpy's cost per call is larger
        than the check)."""
        if not math.isfinite(number):
            return False
        if self.minimum is not None and (number <= self.minimum if self.exclusive_minimum else number < self.minimum):
            return False
        if self.maximum is not None and (number >= self.maximum if self.exclusive_maximum else number > self.maximum):
            return False
        return not (self.integer and number != round(number))

    def _load_one(self, value):
        if isinstance(value, str):  # a number with its unit, "30 mm"
            value = units.to_si(value, self.unit, self.name)
        if not _is_number(value):
            raise ValidationError("Not a number." if not self.integer else "Not a whole number.")
        try:
            number = float(value)
        except OverflowError:  # an integer literal beyond the float range
            raise ValidationError("Must be a finite number.") from None
        if not self._in_range(number):
            raise ValidationError(self._range_message(number))
        return int(number) if self.integer else number

    def _load_column(self, values: list):
        first = values[0] if values else None
        if (type(first) is float and first not in (0.0, 1.0) and values[-1] == first
                and values.count(first) == len(values)):
            # One number in every case (rows that repeat an inlet state): the values equal to a float
            # other than 0 and 1 are numbers (no bool equals it) that convert to that float.
            array = np.full(len(values), first)
        else:
            array = self._column_array(values)
        return self._load_array(array)

    def _column_array(self, values: list) -> np.ndarray:
        if not set(map(type, values)) <= set(_NUMBER_TYPES):
            values, errors = units.column_to_si(values, self.unit, self.name)  # numbers with their units
            if errors:
                raise ValidationError(errors)
        try:
            array = np.asarray(values, dtype=float)
        except OverflowError:  # an integer literal beyond the float range somewhere in the column
            array = np.asarray([float(v) if abs(v) < 1e308 or isinstance(v, float) else np.inf for v in values])
        return array

    def _load_array(self, array: np.ndarray):
        bad = self._out_of_range(array)
        if bad.any():
            raise ValidationError({int(i): [self._range_message(array[i])] for i in np.flatnonzero(bad)})
        return array.astype(np.int64) if self.integer else array


class Option(_CaseField):
    """One of a fixed set of names, e.g. the machine or the gas.

    Parameters
    ----------
    description : str
        What the option selects.
    choices : tuple of str
        The allowed names (reuse the core's module-level tuple).
    """

    def __init__(self, description: str, choices, **kwargs):
        super().__init__(metadata={"description": description, **kwargs.pop("metadata", {})}, **kwargs)
        self.choices = tuple(choices)

    def _message(self) -> str:
        return f"Must be one of: {', '.join(self.choices)}."

    def _load_one(self, value):
        if not isinstance(value, str) or value not in self.choices:
            raise ValidationError(self._message())
        return value

    def _load_column(self, values: list):
        first = values[0] if values else None
        if (type(first) is str and first in self.choices and values[-1] == first
                and values.count(first) == len(values)):
            # One choice in every case (rows that repeat it): no conversion of each string.
            return np.full(len(values), first)
        # Strings only, all among the choices: checked at C speed before any per-item look.
        if not (set(map(type, values)) == {str} and set(values) <= set(self.choices)):
            bad = {i: [self._message()] for i, v in enumerate(values)
                   if not isinstance(v, str) or v not in self.choices}
            if bad:
                raise ValidationError(bad)
        return np.asarray(values, dtype=str)


class QuantityList(_CaseField):
    """A list of finite numbers per case, such as one weight per stage.

    In columns, one list for every case, or a list of such lists, one per case. The lists of
    different cases may differ in length: the request is then computed in groups of cases whose
    lists have one length (:meth:`entry_lengths`), each loaded here as a ``(cases, k)`` array.
    """

    def column_length(self, value) -> int | None:
        """A list of lists holds one list per case; one list of numbers is every case's list."""
        return len(value) if isinstance(value, list) and value and all(isinstance(v, list) for v in value) else None

    def entry_lengths(self, value) -> list[int] | None:
        """The length of each case's list in a column of lists, or None for a value that is the
        same for every case."""
        return None if self.column_length(value) is None else [len(v) for v in value]

    def __init__(self, description: str, unit: str, *, minimum: float | None = None,
                 exclusive_minimum: bool = False, **kwargs):
        super().__init__(metadata={"description": description, "x-unit": unit, **kwargs.pop("metadata", {})},
                         **kwargs)
        self.item = Quantity(description, unit, minimum=minimum, exclusive_minimum=exclusive_minimum)

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, np.ndarray):  # numbers the parser read as an array: as a list of floats
            value = value.tolist()
        if not isinstance(value, list) or not value:
            raise ValidationError("Must be a non-empty list of numbers.")
        if self._loads_columns() and isinstance(value[0], list):
            return self._load_lists(value)
        if self._loads_columns():  # one list for every case: (1, k), never taken for a column of cases
            return self.item._load_column(value)[None, :]
        return self.item._load_column(value)


    def _load_lists(self, value: list) -> np.ndarray:
        """A list per case (columns, or rows loaded as columns): ``(cases, k)``, every list of one length."""
        empty = {i: ["Must be a non-empty list of numbers."] for i, v in enumerate(value) if v == []}
        if empty:  # as one case's empty list is refused (rows are loaded as columns)
            raise ValidationError(empty)
        lengths = {len(v) if isinstance(v, list) else -1 for v in value}
        if -1 in lengths:
            raise ValidationError("Must be one list of numbers for every case, or a list of such lists "
                                  "(one per case).")
        if len(lengths) != 1:
            raise ValidationError("Every case's list must have the same length.")
        rows, errors = [], {}
        for i, case_values in enumerate(value):
            try:
                rows.append(self.item._load_column(case_values))
            except ValidationError as error:
                errors[i] = error.messages
        if errors:
            raise ValidationError(errors)
        return np.vstack(rows)


class QuantityPerStage(QuantityList):
    """One number for every stage, or a list with one number per stage (front to rear).

    Loaded as a number (one case), a ``(1, k)`` array (one case's list), a ``(cases,)`` array (rows
    of numbers) or a ``(cases, k)`` array (rows of lists of one length), so the core tells a value
    for every stage (0-D or 1-D) from a list per stage (2-D).
    """

    def __init__(self, description: str, unit: str, *, minimum: float | None = None, maximum: float | None = None,
                 exclusive_minimum: bool = False, **kwargs):
        super().__init__(description, unit, minimum=minimum, exclusive_minimum=exclusive_minimum, **kwargs)
        self.item = Quantity(description, unit, minimum=minimum, maximum=maximum,
                             exclusive_minimum=exclusive_minimum)

    def column_length(self, value) -> int | None:
        """In columns a list of numbers holds one value per case, as a list of lists one list per case."""
        return len(value) if isinstance(value, list | np.ndarray) else None

    def entry_lengths(self, value) -> list[int] | None:
        """As :meth:`QuantityList.entry_lengths`; a number among the lists (-1) is that case's value for
        every stage."""
        if isinstance(value, list) and any(isinstance(v, list) for v in value):
            return [len(v) if isinstance(v, list) else -1 for v in value]
        return None

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, np.ndarray):  # numbers the parser read as an array: as a list of floats
            value = value.tolist()
        if not isinstance(value, list):
            return self.item._load_one(value)
        if self._loads_columns() and value and not isinstance(value[0], list):
            return self.item._load_column(value)
        loaded = super()._deserialize(value, attr, data, **kwargs)
        return loaded if loaded.ndim == 2 else loaded[None, :]
