"""gonogo: what acting on a binary probability forecast costs, replayed many times.

The Python interface is :func:`run` (or :func:`run_history` on a history already read); the command
line (``gonogo``) is a thin layer over it. Results are plain dataclasses holding numpy arrays and
pandas DataFrames: :class:`RunResult`, and with a site column :class:`Portfolio` and
:class:`SiteResult`. See docs/python.md.
"""

__version__ = "0.1.0"

from .inputs.errors import InputError  # noqa: E402
from .inputs.scenario import Scenario, read_scenario, scenario_from_text  # noqa: E402
from .inputs.scenario_costs import Costs  # noqa: E402
from .inputs.history import History, history_from_frame, read_history  # noqa: E402
from .results import Portfolio, RunResult, SiteResult  # noqa: E402
from .run import run, run_history  # noqa: E402

__all__ = ["__version__", "InputError", "Scenario", "Costs", "read_scenario", "scenario_from_text",
           "History", "read_history", "history_from_frame", "RunResult", "SiteResult", "Portfolio",
           "run", "run_history"]
