"""A run's work cut into tasks and shared out: what every task needs, the plan, each site's results.

``work`` holds what is sent to every worker once (the replay, each site's scenario, the seeds) and
what a process keeps between tasks; ``plan`` cuts a run into tasks of (a group of sites, a chunk of
seeded blocks), runs them on an executor of ``execution`` and puts their season costs together in
block order; ``sites`` makes each site's results, checks and the portfolio's totals where the site
was priced. The way the work is shared out changes speed, never results.

May import: ``results``, ``analysis``, ``execution``, ``rules``, ``pricing``, ``replay``, ``inputs``,
``notation``.
"""
