"""Where the work runs: the executors (this process, local worker processes, a Dask cluster).

``executor`` holds the interface every executor keeps and the one that runs tasks in this process;
``pool`` runs them in local worker processes, whose shared inputs travel through ``shared_memory``
and whose start and end (Ctrl-C and SIGTERM held back, ending with the run's process) are
``lifetime``'s; ``dask_cluster`` sends them to a Dask scheduler, and ``dask_worker`` fits the Dask
worker's process to them while they run; ``choose`` opens the executor a run asks for. Every
executor gives the same results, whatever the order in which tasks finish.

May import: ``inputs``, ``notation``.
"""
