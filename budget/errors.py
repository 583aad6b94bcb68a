"""The one error type of the package, and its message template.

Every input problem raises :class:`BudgetInputError`, which is also a
``ValueError``.  The message names the field, the allowed range and the value
received, in one line, following the template::

    The 'tilt_max_deg' field of [camera] must be a number in [0, 30). Got 45 instead.
"""

from __future__ import annotations

import warnings


class BudgetInputError(ValueError):
    """Bad input: the message names the field, the allowed range and the value."""


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
    """Issue a :class:`BudgetWarning` that reports collect."""
    warnings.warn(message, BudgetWarning, stacklevel=3)
