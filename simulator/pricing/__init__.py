"""Counts at every cutoff and what they cost: the contingency tables, costs, scores and the decision.

``contingency`` counts hits, misses, false alarms and correct negatives at every cutoff, and
``rates`` turns them into hit rate, false alarm rate and the like; ``counts`` counts replicate
seasons at every cutoff and every baseline; ``costs`` is the one place counts become money, with
``draws`` drawing per replicate the costs (and the operating rules' prices) given as ranges;
``slot_costs`` gives a model's season costs straight from its slots where no counts are kept and
the costs make exact sums (whole numbers, halves, quarters...: the same bits as the counts priced);
``scoring`` holds the scores of the probabilities (Brier, ROC, reliability); ``value`` the value of
acting on them (relative economic value, net benefit); ``tables`` lays all of these out for the
history; ``decision`` picks the recommended cutoff by the chosen objective and states break-even
ranges. Pure array functions: no files, no printing.

May import: ``replay``, ``inputs``, ``notation``.
"""
