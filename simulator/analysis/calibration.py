"""The probabilities' calibration for the ``calibrated`` pricing mode, fitted on the training period.

An isotonic regression of the outcome on the forecast probability over the training period (the
pool-adjacent-violators algorithm, ``scipy.optimize.isotonic_regression``; Zadrozny and Elkan 2002
use it to calibrate classifier scores), from which replicate outcomes are drawn afresh. The
reliability table beside it is the one of ``pricing/scoring.py``.

References
----------
Zadrozny, B. and Elkan, C. (2002). Transforming classifier scores into accurate multiclass
probability estimates. KDD 2002 (pages from memory, check).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..notation import decimals
from ..pricing import scoring
from ..inputs.history import History

__all__ = ["Recalibration", "fit_recalibration", "Calibration", "calibrate"]


@dataclass(frozen=True)
class Recalibration:
    """A non-decreasing map from forecast probability to observed frequency.

    ``knots`` are the distinct training probabilities (ascending), ``values`` the fitted frequency
    at each; between knots the map is linear, outside them constant (as scikit-learn's
    ``IsotonicRegression(out_of_bounds="clip")`` predicts).
    """

    knots: np.ndarray
    values: np.ndarray

    def __call__(self, p: np.ndarray) -> np.ndarray:
        return np.interp(np.asarray(p, dtype=float), self.knots, self.values)


def fit_recalibration(p: np.ndarray, event: np.ndarray) -> Recalibration:
    """Isotonic regression of ``event`` (0/1) on ``p``, each (n_occasions,).

    Equal probabilities are pooled first (their mean outcome, weighted by their count), then the
    pool-adjacent-violators solution is found over the distinct values. The fit keeps the sum:
    over the training occasions the recalibrated probabilities add up to the number of events.
    """
    from scipy.optimize import isotonic_regression  # imported here: only the calibrated mode needs it

    p = np.asarray(p, dtype=float)
    event = np.asarray(event, dtype=float)
    knots, inverse, counts = np.unique(p, return_inverse=True, return_counts=True)
    means = np.bincount(inverse, weights=event, minlength=knots.size) / counts
    fitted = isotonic_regression(means, weights=counts.astype(float), increasing=True).x
    return Recalibration(knots=knots, values=np.clip(fitted, 0.0, 1.0))


@dataclass(frozen=True)
class Calibration:
    """The recalibration behind the ``calibrated`` mode and how it changes the record.

    ``probability`` is the recalibrated probability of every history row (n_rows,), from which
    replicate outcomes are drawn. ``table`` is a reliability diagram of the training period
    (Broecker and Smith 2007): bins of the forecast probability with their count, mean forecast,
    observed frequency, and the mean recalibrated probability. Brier scores before and after
    recalibration: on the training period (in-sample, so "after" is flattering) and on the
    validation period when there is one (NaN otherwise). Where the fit pools neighbouring
    probabilities it is flat across the pool, so a cutoff inside a pool sees the same outcome rate on
    both sides of it; the replay does not smooth so.
    """

    recalibration: Recalibration
    probability: np.ndarray
    table: pd.DataFrame
    training_rows: int
    training_start: str
    training_end: str
    brier_training: float
    brier_training_recalibrated: float
    brier_validation: float
    brier_validation_recalibrated: float


def calibrate(history: History, n_bins: int = 10) -> Calibration:
    """Fit the recalibration on the training period and tabulate the calibration curve."""
    train = history.training
    p, event = history.p[train], history.event[train]
    fit = fit_recalibration(p, event)
    probability = fit(history.p)
    table = scoring.reliability_table(p, event, n_bins)
    bins = decimals.bins(p, n_bins)  # the bins of scoring.reliability_table
    recal_sum = np.bincount(bins, weights=probability[train], minlength=n_bins)
    frame = pd.DataFrame(dataclasses.asdict(table))
    with np.errstate(invalid="ignore", divide="ignore"):
        frame["recalibrated_mean"] = np.where(table.n > 0, recal_sum / np.maximum(table.n, 1), np.nan)
    val = history.validation
    nan = float("nan")
    dates = history.dates[train]
    return Calibration(
        recalibration=fit, probability=probability, table=frame, training_rows=int(train.sum()),
        training_start=str(dates[0]), training_end=str(dates[-1]),
        brier_training=float(scoring.brier_score(p, event)),
        brier_training_recalibrated=float(scoring.brier_score(probability[train], event)),
        brier_validation=(float(scoring.brier_score(history.p[val], history.event[val]))
                          if val.any() else nan),
        brier_validation_recalibrated=(float(scoring.brier_score(probability[val], history.event[val]))
                                       if val.any() else nan))


# ------------------------------------------------------------------------------------------------
# honest selection
