"""The findings of a run and their renderings: summary.json, CSV files, figures, report, cautions.

``findings`` states each finding once with its unit and basis (``cost_doubt``: the costs given
as ranges); ``outputs`` turns a run's result
into the bytes of every file (``file_names`` lists them), which ``result_set`` writes as one set
(staged, swapped in, never half-written) into a folder ``out_folder`` checked before any work.
``report`` draws the HTML report: ``report_sections`` builds what each section shows,
``scenario_words`` reads the scenario back in words, ``report_page`` holds the page machinery
(templates, escaping, embedded figures). The figures share ``figure_style`` and are drawn by theme:
``cost_figures``, ``quality_figures``, ``stress_figures``, ``operations_figures``.
``whatif`` (fixed costs) and ``whatif_rules`` (the operating rules' prices) make the data of the
report's meeting what-if, written compactly by ``page_codec``; ``datapackage`` describes the CSV files; ``cautions`` holds the safety texts; ``terminal`` makes the
headline and tables that ``cli`` prints.

May import: ``results`` (run's results) and everything below it; nothing below imports this.
"""
