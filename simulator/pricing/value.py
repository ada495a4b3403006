"""The value of acting on the forecast: relative economic value, its curve, and net benefit.

Pure functions of rates, counts or expenses, elementwise with broadcasting: float64, NaN where a
quantity is undefined, no warnings.
"""

from __future__ import annotations

import numpy as np

from .contingency import Contingency
from .rates import _ratio, rates

__all__ = ["relative_value", "relative_value_from_costs", "net_benefit", "net_benefit_treat_all",
           "value_curve"]


def relative_value(hit_rate, false_alarm_rate, base_rate, cost_loss_ratio):
    """Relative economic value of acting on the forecast: 1 = perfect, 0 = climate.

    V = (E_climate - E_forecast) / (E_climate - E_perfect); expenses per occasion in units
    of the loss, a = cost_loss_ratio, s = base_rate, H and F the rates:
    E_climate = min(a, s), E_perfect = s*a, E_forecast = F*a*(1-s) - H*s*(1-a) + s.
    At a = s it reduces to V = H - F, the greatest value over a.

    Parameters
    ----------
    hit_rate, false_alarm_rate, base_rate, cost_loss_ratio : float arrays
        Broadcast against each other, for example H and F of shape (n_cutoffs,) with a ratio of
        shape (n_ratios, 1) give (n_ratios, n_cutoffs).

    Returns
    -------
    float array of the broadcast shape; NaN where E_climate = E_perfect (a or s at 0 or 1).
    V can be negative: acting on the forecast then costs more than the better fixed action.

    References
    ----------
    Richardson, D. S. (2000). Skill and relative economic value of the ECMWF
    ensemble prediction system. Q. J. R. Meteorol. Soc. 126, 649-667.
    """
    h = np.asarray(hit_rate, dtype=np.float64)
    f = np.asarray(false_alarm_rate, dtype=np.float64)
    s = np.asarray(base_rate, dtype=np.float64)
    a = np.asarray(cost_loss_ratio, dtype=np.float64)
    e_climate = np.minimum(a, s)
    e_perfect = s * a
    e_forecast = f * a * (1.0 - s) - h * s * (1.0 - a) + s
    return _ratio(e_climate - e_forecast, e_climate - e_perfect)


def relative_value_from_costs(expense_model, expense_never, expense_always, expense_perfect):
    """Relative value from mean expenses per occasion under any 2x2 cost matrix.

    V = (min(E_never, E_always) - E_model) / (min(E_never, E_always) - E_perfect), with E the
    mean expense per occasion (any currency) of acting on the forecast, never acting, always
    acting and acting exactly on the events. Elementwise with broadcasting; NaN where the
    denominator is 0.

    Adding a constant to the costs of one true class, or scaling all costs, leaves V unchanged;
    in cost-loss units this is :func:`relative_value` with a = C'/(C'+D'), C' = c_fa - c_cn,
    D' = c_m - c_h (derived; METHODS.md 1.1-1.2).

    References
    ----------
    Richardson (2000), as for :func:`relative_value`; general matrix as in Elkan, C. (2001).
    The foundations of cost-sensitive learning. IJCAI-01, 973-978.
    """
    e_model = np.asarray(expense_model, dtype=np.float64)
    e_climate = np.minimum(np.asarray(expense_never, dtype=np.float64),
                           np.asarray(expense_always, dtype=np.float64))
    return _ratio(e_climate - e_model, e_climate - np.asarray(expense_perfect, dtype=np.float64))


def _odds(threshold) -> np.ndarray:
    pt = np.asarray(threshold, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        return pt / (1.0 - pt)


def net_benefit(hits, false_alarms, n, threshold):
    """Net benefit of acting on the forecast at threshold probability pt.

    NB = hits/n - (false_alarms/n) * pt/(1-pt): events acted on per occasion, less the false
    alarms weighted by the threshold odds (the harm:benefit exchange rate). NB of never acting
    is 0. With pt = C'/(C'+D'), NB = (E_never - E_model)/D' per occasion (derived, METHODS 1.3).

    Parameters
    ----------
    hits, false_alarms : int arrays, e.g. shape (n_cutoffs,)
    n : int or int array
        Number of occasions.
    threshold : float array in [0, 1), broadcast against the counts

    Returns
    -------
    float array of the broadcast shape.

    References
    ----------
    Vickers, A. J. & Elkin, E. B. (2006). Decision curve analysis: a novel method for evaluating
    prediction models. Med. Decis. Making 26(6), 565-574.
    """
    n = np.asarray(n, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (np.asarray(hits, dtype=np.float64) / n
               - np.asarray(false_alarms, dtype=np.float64) / n * _odds(threshold))
    return out[()]


def net_benefit_treat_all(prevalence, threshold):
    """Net benefit of always acting: NB_all = s - (1 - s) * pt/(1 - pt), s the prevalence.

    Elementwise with broadcasting. Vickers & Elkin (2006), as for :func:`net_benefit`.
    """
    s = np.asarray(prevalence, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        return (s - (1.0 - s) * _odds(threshold))[()]


def value_curve(c: Contingency, ratios) -> np.ndarray:
    """Potential relative value for each cost-loss ratio: the best V over the cutoffs.

    V_pot(a) = max_k V(H_k, F_k, s, a) (:func:`relative_value`), the upper envelope of the
    value curves of the single cutoffs. It assumes the user picks the best cutoff for his ratio
    with hindsight; value at a cutoff chosen in advance ("actual" value) can be lower (Atger 2001).
    It is not clipped at 0: include cutoffs that mean always acting (0) and never acting (above
    every p) for the envelope to contain climatology.

    Parameters
    ----------
    c : Contingency
        Counts of shape (n_cutoffs,) or (n_replicates, n_cutoffs).
    ratios : float array, shape (n_ratios,)
        Cost-loss ratios a = C/L.

    Returns
    -------
    float array, shape (n_ratios,) or (n_replicates, n_ratios); NaN where V is NaN at every cutoff.

    References
    ----------
    Richardson (2000), as for :func:`relative_value`. Atger, F. (2001). Verification of intense
    precipitation forecasts from single models and ensemble prediction systems. Nonlin.
    Processes Geophys. 8, 401-417.
    """
    ratios = np.asarray(ratios, dtype=np.float64)
    if ratios.ndim != 1:
        raise ValueError(f"ratios must be 1-D, got shape {ratios.shape}")
    r = rates(c)
    h = np.asarray(r.hit_rate, dtype=np.float64)[..., None, :]
    f = np.asarray(r.false_alarm_rate, dtype=np.float64)[..., None, :]
    s = np.asarray(r.base_rate, dtype=np.float64)[..., None, :]
    v = relative_value(h, f, s, ratios[:, None])       # (..., n_ratios, n_cutoffs)
    return np.fmax.reduce(v, axis=-1)                    # NaN-ignoring max, no warning
