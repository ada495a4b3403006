"""What the user gives: the scenario file, the history of forecasts and outcomes, and their errors.

``scenario`` is the one scenario schema (pydantic); ``history`` the one history loader, with
``sheets`` (spreadsheets, separators, decimal commas, encodings) and ``dates`` (date formats and
the history's frequency) beneath it; ``errors`` the one-line input error every bad input ends in;
``starter`` writes a starting scenario for a user's own file (``gonogo init``). Reading files is
allowed here and nowhere else below ``run``.

May import: ``notation``.
"""
