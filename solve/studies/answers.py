"""The shape every answer to an inverse question shares.

An inverse question (which temperature, pressure or feed ratio gives a wanted conversion,
with or without an interval from the data uncertainty) answers with a frozen record that
has, besides its own named fields, the same four things as every other one, modelled on
:class:`eqdesign.solve.core.result.EquilibriumResult`:

* ``value`` — the answer in SI (NaN where there is none) and ``unit`` its unit;
* ``status`` — per question, one of :data:`STATUSES`: ``"reached"`` (a crossing of the
  target inside the search range), ``"search-range end"`` (the target is met over the whole
  range, so the value is the end of the range the rule picks, not a limit) or
  ``"not reachable"`` (the target is not met anywhere in the range);
* ``message`` — one plain-language sentence per question.

Scalars for a single question, arrays of the questions' broadcast shape otherwise.
"""
from __future__ import annotations

from typing import ClassVar

import numpy as np


#: The status of a question whose target is crossed inside the search range.
REACHED = "reached"
#: The target is met over the whole search range: the value is a range end.
RANGE_END = "search-range end"
#: The target is not met anywhere in the search range.
NOT_REACHABLE = "not reachable"
#: Every status an inverse answer can carry.
STATUSES = (REACHED, RANGE_END, NOT_REACHABLE)


def answer_status(reached, at_range_end):
    """Status per question from the two flags (arrays of one shape, or scalars).

    Parameters
    ----------
    reached : bool | ndarray of bool
        The target is reached in the search range.
    at_range_end : bool | ndarray of bool
        The target is met over the whole search range, so the nominal value is a range
        end (takes precedence over ``reached``).

    Returns
    -------
    str | ndarray of str
        One of :data:`STATUSES` per question.

    Examples
    --------
    >>> answer_status(True, False), answer_status(True, True), answer_status(False, False)
    ('reached', 'search-range end', 'not reachable')
    """
    reached = np.asarray(reached, dtype=bool)
    end = np.broadcast_to(np.asarray(at_range_end, dtype=bool), reached.shape)
    out = np.where(end, RANGE_END, np.where(reached, REACHED, NOT_REACHABLE)).astype(object)
    return str(out.item()) if out.ndim == 0 else out


class InverseAnswer:
    """Mixin giving an answer record the shared shape: ``value``, ``unit``, ``status``,
    ``shape`` (``message`` and ``reached`` are fields of the record itself).

    A subclass names its value field (``value_field = "T"``) and its ``unit``; a record
    that knows when its value is a range end has a field ``at_range_end``.
    """

    value_field: ClassVar[str]
    unit: ClassVar[str]

    @property
    def value(self):
        """The answer [``unit``]: the record's own field (``T``, ``P`` or ``ratio``)."""
        return getattr(self, self.value_field)

    @property
    def shape(self) -> tuple:
        """Shape of the questions (``()`` for a single question)."""
        return np.shape(self.value)

    @property
    def status(self):
        """Per question: ``"reached"``, ``"search-range end"`` or ``"not reachable"``."""
        return answer_status(self.reached, getattr(self, "at_range_end", False))


def shape_out(x, shape):
    """``x`` reshaped to the questions' ``shape``; a Python scalar for a single question
    (``shape == ()``)."""
    x = np.asarray(x)
    return x.reshape(shape) if shape else x.reshape(()).item()
