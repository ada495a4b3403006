"""Questions asked of the priced replicates: stress cases, the honest check, the verdict, forecasts.

``stress`` reprices rarer-event and costlier years, with ``tilt`` (moving the replicates' event
rate), ``probability_changes`` (the forecast moved to a new rate, stripped of skill or blurred) and
``replicate_pricer`` (replicate seasons priced with those changes); ``selection`` chooses the
cutoff on training seasons and prices it on validation ones; ``calibration`` fits the recalibration
of the calibrated pricing mode on the training period; ``verdict`` holds
each past season out in turn to say whether the forecast beats the best rule that ignores it;
``forecasts`` compares several forecasts on the same replicate seasons, and ``winners`` says
which one wins a set of them (the base case, a stress case, a site); ``cost_spread`` splits the
spread of a season cost between the weather and costs given as ranges; ``sensitivity`` moves each
cost alone (its ends and switching values), and ``rules_sensitivity`` each of the operating
rules' prices.

May import: ``rules``, ``pricing``, ``replay``, ``inputs``, ``notation``.
"""
