"""The findings of a run and their renderings: summary.json, CSV files, figures, report, cautions.

``findings`` states each finding once with its unit and basis; ``outputs`` turns a run's result
into the bytes of every file, which ``result_set`` writes as one set (staged, swapped in,
never half-written); ``report`` and ``figures`` draw the HTML report; ``datapackage`` describes
the CSV files; ``cautions`` holds the safety texts; ``terminal`` makes the headline and tables that
``cli`` prints.

May import: ``results`` (run's results) and everything below it; nothing below imports this.
"""
