"""What the user gives: the scenario file, the history of forecasts and outcomes, and their errors.

``scenario`` is the one scenario schema (pydantic): the top-level ``Scenario``, reading it and its
one-line errors, over its tables (``scenario_tables``; ``scenario_costs``, the ``[costs]`` table and
the break-even probability; ``scenario_changes``, ``[[stress]]`` and ``[sites]``; ``ranges``, costs
written as ``{low, likely, high}``), their limits and
types (``scenario_types``) and the words for what a key allows (``allowed_values``). ``history`` is
the one history loader and the ``History`` it builds, with ``history_checks`` (each column, cell by
cell), ``history_calendar`` (how often rows come, the season's occasions), ``history_gaps`` (dates
without a row), ``sheets`` (spreadsheets, separators, decimal commas, encodings) and ``dates``
(date formats) beneath it; ``errors`` the one-line input error every bad input ends in;
``starter`` writes a starting scenario for a user's own file (``gonogo init``). Reading files is
allowed here and nowhere else below ``run``.

May import: ``notation``.
"""
