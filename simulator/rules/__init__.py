"""Operating rules: seasons played day by day under crews, deadlines and safety stops.

``operations`` holds the rules of ``[operations]`` and the simpy model that plays them (the
readable reference); ``operations_fast`` is its vectorised twin, checked against it, that prices
every replicate and cutoff at once.

May import: ``pricing``, ``replay``, ``inputs``, ``notation``.
"""
