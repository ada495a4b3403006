"""Replaying history: the season calendar, the block length and the block-bootstrap resampler.

``resample`` lays past seasons on the priced calendar and draws replicate seasons as blocks of
past days (one replicate generator, seeded per block so every strategy, cutoff and forecast sees
the same draws); ``blocklength`` chooses the block length from the history's own dependence.

May import: ``inputs``, ``notation``.
"""
