"""The package's error types, its one message template, and the warnings that reports collect.

Every input problem raises :class:`BudgetInputError`, which is also a ``ValueError``. The
message names the field, the allowed range and the value received, in one line, following the
template::

    The 'tilt_max_deg' field of [camera] must be a number in [0, 30). Got 45 instead.

A computation that the input makes impossible (a fit that does not converge) raises
:class:`BudgetComputationError`. Suspicious but valid input raises a :class:`BudgetWarning`
through :func:`warn`; :func:`collected_warnings` gathers them so that a run puts them into its
results and every report shows them.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterator
from contextlib import contextmanager

__all__ = ["BudgetInputError", "BudgetComputationError", "BudgetWarning", "field_error", "warn",
           "collected_warnings"]


class BudgetInputError(ValueError):
    """Bad input: the message names the field, the allowed range and the value."""


class BudgetComputationError(RuntimeError):
    """A computation the input makes impossible, e.g. an iterative fit that does not converge."""


class BudgetWarning(UserWarning):
    """Suspicious but valid input or a result that needs the reader's attention."""


def field_error(field: str, allowed: str, got: object, where: str | None = None) -> BudgetInputError:
    """Build the one-line error for a bad field.

    Parameters
    ----------
    field : str
        Name of the parameter or field, e.g. ``"sd"`` or ``"tilt_max_deg"``.
    allowed : str
        What is allowed, e.g. ``"a number > 0"`` or ``"a number in [0, 90)"``.
    got : object
        The value received.
    where : str, optional
        Context such as ``"[camera]"`` or ``"Normal"``.
    """
    place = f" of {where}" if where else ""
    return BudgetInputError(f"The '{field}' field{place} must be {allowed}. Got {got!r} instead.")


def warn(message: str) -> None:
    """Issue a :class:`BudgetWarning`; a run collects it (:func:`collected_warnings`) into its reports."""
    warnings.warn(message, BudgetWarning, stacklevel=3)


@contextmanager
def collected_warnings() -> Iterator[list[str]]:
    """Collect the :class:`BudgetWarning` messages issued inside the block, in order, once each.

    Other warnings pass through unchanged. The list is filled when the block ends.
    """
    found: list[str] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", BudgetWarning)
        yield found
    for w in caught:
        if issubclass(w.category, BudgetWarning):
            if str(w.message) not in found:
                found.append(str(w.message))
        else:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno, source=w.source)
