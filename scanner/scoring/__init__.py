"""Scoring: coupled runs in, ranked findings against the budgets out.

``directions`` takes every run once per direction (aggressor -> victim) with its edge and budgets;
``peaks`` computes NEXT/FEXT peaks of many non-uniform runs at once; ``noise`` applies the
differential-aggressor model and the budget status; waivers from ``scanner.signoff`` are matched to the
directed findings before any total or record is built; ``totals`` sums each victim's aggressors (waived
contributions left out) and gives its status; ``fix_plans`` decides which runs each warn/fail victim needs
changed and re-scores every change (``fixes`` solves spacing, length and layer); ``findings`` builds one
record per coupled run with both directions, and the victim records; ``class_limits`` checks the rules'
geometric limits between net classes; ``exact_check`` runs the exact line simulation beside the estimate;
``results`` holds the result records and the report.json shape. In: CoupledSet, rules, net roles.
Out: :class:`scanner.scoring.results.ScanResult`.
"""
