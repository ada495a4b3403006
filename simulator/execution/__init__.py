"""Where the work runs: tasks, their planning and the executors (inline, a local pool, Dask).

``parallel`` splits a run into tasks of replicate blocks or sites and runs them on the chosen
executor, with stops (Ctrl-C, SIGTERM) that leave no worker behind.

May import: ``inputs``, ``notation``.
"""
