"""Running statsmodels estimation without its routine notices reaching the user.

statsmodels warns when it cannot estimate good starting values on short series
(``EstimationWarning``) and when series carry no date frequency (``ValueWarning``); both are
expected here. A ``ConvergenceWarning`` is worth knowing about, so it is returned as a flag the
model stores. Any other warning is passed on unchanged.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from typing import TypeVar

from statsmodels.tools.sm_exceptions import ConvergenceWarning, EstimationWarning, ValueWarning

Result = TypeVar("Result")


def estimate(work: Callable[[], Result]) -> tuple[Result, bool]:
    """Run ``work``; return its result and whether the optimiser reported convergence."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        result = work()
    converged = True
    for notice in caught:
        if issubclass(notice.category, ConvergenceWarning):
            converged = False
        elif not issubclass(notice.category, EstimationWarning | ValueWarning):
            warnings.warn_explicit(notice.message, notice.category, notice.filename, notice.lineno)
    return result, converged
