"""Counts at every cutoff and what they cost: the contingency tables, costs, scores and the decision.

``tables`` counts hits, misses, false alarms and correct negatives at every cutoff; ``costs`` is
the one place counts become money; ``scoring`` holds the forecast-quality scores (Brier, ROC,
reliability, relative economic value); ``decision`` picks the recommended cutoff by the chosen
objective and states break-even ranges. Pure array functions: no files, no printing.

May import: ``replay``, ``inputs``, ``notation``.
"""
