"""Operating rules: seasons played day by day under crews, deadlines and safety stops.

``operating_rules`` states the rules of ``[operations]`` and lays them on the priced season;
``simpy_model`` plays them event by event with simpy (the readable reference, and the engine for
rules users write as simpy processes); ``vectorised_model`` is its twin, checked against it, that
plays every replicate and cutoff at once; ``season_cost`` prices what either played, and
``price_terms`` writes the same sum price by price (what the report's what-if computes);
``operations_result`` holds a run's operations extras and writes its summary block.

May import: ``pricing``, ``replay``, ``inputs``, ``notation``.
"""
