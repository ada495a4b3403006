"""Rewrite the demo histories beside this file from simulator.demo.

    .venv/bin/python scenarios/regenerate.py

The CSVs are golden files (tests/test_demo.py compares them byte for byte with the generators);
run this only after changing a generator on purpose, and review the diff.
"""

from pathlib import Path

from simulator.demo.generator import gritting_history, line_marking_history, river_history, write_history_csv

HERE = Path(__file__).resolve().parent

if __name__ == "__main__":
    for name, history in [
        ("line_marking_history.csv", line_marking_history()),
        ("river_pumps_history.csv", river_history()),
        ("gritting_depots_history.csv", gritting_history()),
    ]:
        print(write_history_csv(history, HERE / name))
