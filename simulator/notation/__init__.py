"""Numbers as people write and read them: the lowest layer, imported by every other.

``decimals`` is the one place a probability meets a cutoff, threshold or bin edge: comparisons are
made in whole units of 1e-12, so "act when p >= 0.44" holds exactly as a person reads it. ``prose``
is the one formatter of money, shares, rates and cutoffs in sentences.

May import: the standard library and numpy only; nothing else from ``simulator``.
"""
