"""gonogo: what acting on a binary probability forecast costs, replayed many times.

The Python interface is :func:`run`; the command line (``gonogo``) is a thin layer over it.
"""

__version__ = "0.1.0"

from .errors import InputError  # noqa: E402
from .scenario import Scenario, read_scenario  # noqa: E402
from .history import History, read_history  # noqa: E402
from .run import RunResult, run, run_history  # noqa: E402

__all__ = ["__version__", "InputError", "Scenario", "read_scenario", "History", "read_history",
           "RunResult", "run", "run_history"]
