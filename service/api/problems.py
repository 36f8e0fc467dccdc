"""Every failure as one RFC 9457 problem document (``application/problem+json``): the problem types
and :class:`Problem`. Written as an HTTP answer by :mod:`service.api.problem_responses`; nothing
here imports Flask."""

from __future__ import annotations

PROBLEM_TYPE = "application/problem+json"
INVALID_INPUT = "urn:meanline:problem:invalid-input"
PHYSICALLY_IMPOSSIBLE = "urn:meanline:problem:physically-impossible"
TOO_LARGE = "urn:meanline:problem:too-large"
MALFORMED = "urn:meanline:problem:malformed-json"
UNAUTHORIZED = "urn:meanline:problem:unauthorized"
FORBIDDEN = "urn:meanline:problem:forbidden"
STOPPED = "urn:meanline:problem:request-stopped"
INTERNAL = "urn:meanline:problem:internal-error"

#: How many field errors one response lists at most; the rest are counted.
MAX_LISTED_ERRORS = 200

class Problem(Exception):
    """A failure that the error handler turns into a problem document.

    Parameters
    ----------
    status : int
        HTTP status.
    title : str
        Short, fixed summary of the problem type.
    detail : str
        What went wrong in this request, in words the caller can act on.
    type_ : str
        URI of the problem type.
    errors : list of (str, str), optional
        JSON Pointers into the request body with what is wrong there.
    """

    def __init__(self, status: int, title: str, detail: str, type_: str = "about:blank", errors=None):
        super().__init__(detail)
        self.status = status
        self.title = title
        self.detail = detail
        self.type = type_
        self.errors = list(errors or [])
        self.not_listed = 0  # errors counted but not in ``errors``


def invalid_input(errors, detail: str | None = None) -> Problem:
    """422 naming every offending field by JSON Pointer.

    An entry ``(None, count)`` stands for ``count`` errors that were counted but not spelled out
    (see :func:`unlisted`): they add to the count and to ``errors_not_listed``.
    """
    errors = list(errors)
    not_listed = sum(error[1] for error in errors if error[0] is None)
    errors = sorted({error for error in errors if error[0] is not None},
                    key=lambda item: (_pointer_sort_key(item[0]), item[1]))
    problem = Problem(
        422,
        "Invalid input",
        detail or f"{len(errors) + not_listed} input value(s) are missing, unknown or out of range.",
        INVALID_INPUT,
        errors,
    )
    problem.not_listed = not_listed
    return problem


def unlisted(count: int) -> tuple[None, int]:
    """An entry of an error list for ``count`` errors beyond those listed (see :func:`invalid_input`)."""
    return (None, count)


def _pointer_sort_key(pointer: str):
    return [(0, int(part), "") if part.isdigit() else (1, 0, part) for part in pointer.split("/")]
