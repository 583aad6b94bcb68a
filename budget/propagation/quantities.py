"""Input quantities: a distribution plus what a reader of the budget needs to trace it."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from budget.errors import field_error
from budget.propagation.distributions import Distribution

__all__ = ["InputQuantity", "as_quantities"]


@dataclass(frozen=True)
class InputQuantity:
    """One input quantity of a measurement model (JCGM 100 4.1).

    Parameters
    ----------
    distribution : Distribution
        The state of knowledge about the quantity.
    unit : str
        Unit of the quantity, e.g. ``"px"`` or ``"rad"``.
    group : str, optional
        Budget component the quantity belongs to (a row of the user's budget);
        defaults to the quantity's own name.
    source : str
        Where the figure comes from: datasheet, certificate, repeated frames,
        assumption. Carried into every report.
    evaluation : str, optional
        ``"A"`` or ``"B"`` (JCGM 100 4.2, 4.3); inferred from the distribution
        when not given (t distributions are Type A).
    """

    distribution: Distribution
    unit: str = ""
    group: str | None = None
    source: str = ""
    evaluation: str | None = None

    def __post_init__(self) -> None:
        if not isinstance(self.distribution, Distribution):
            raise field_error("distribution", "a Distribution", self.distribution, "InputQuantity")
        if self.evaluation is None:
            object.__setattr__(self, "evaluation", "A" if self.distribution.is_type_a else "B")
        elif self.evaluation not in ("A", "B"):
            raise field_error("evaluation", "'A' or 'B'", self.evaluation, "InputQuantity")


def as_quantities(inputs: Mapping[str, Distribution | InputQuantity]) -> dict[str, InputQuantity]:
    """Normalize a mapping of names to distributions or quantities.

    Raises
    ------
    BudgetInputError
        When the mapping is empty, a name is not a string, or a value is neither.
    """
    if not isinstance(inputs, Mapping) or len(inputs) == 0:
        raise field_error("inputs", "a non-empty mapping of names to distributions", inputs)
    out: dict[str, InputQuantity] = {}
    for name, item in inputs.items():
        if not isinstance(name, str) or not name.isidentifier():
            raise field_error("inputs", "keys that are Python identifiers", name)
        if isinstance(item, InputQuantity):
            out[name] = item
        elif isinstance(item, Distribution):
            out[name] = InputQuantity(distribution=item)
        else:
            raise field_error(f"inputs[{name!r}]", "a Distribution or InputQuantity", item)
    return out
