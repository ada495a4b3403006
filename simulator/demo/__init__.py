"""The invented demo: fictional companies and places, generated data, scenario files.

``generator`` makes the demo histories (line marking, river depots, gritting) from fixed seeds and
writes them beside the scenario copied from ``data/``. Invented data: for demonstrations only,
never for checks.

May import: nothing from ``simulator`` (it writes plain CSV and TOML of its own).
"""
