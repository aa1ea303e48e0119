"""Scoring: coupled runs in, ranked findings against the budgets out.

``directions`` takes every run once per direction (aggressor -> victim) with its edge and budgets;
``peaks`` computes NEXT/FEXT peaks of many non-uniform runs at once; ``noise`` applies the
differential-aggressor model and the budget status; ``findings`` builds hotspot records and
victim totals; ``fixes`` finds the spacing, length or layer that meets a budget;
``class_limits`` checks the rules' geometric limits between net classes (waivers from
``scanner.signoff`` are matched to the findings here, before records are built); ``exact_check`` runs the
exact line simulation beside the estimate; ``results`` holds the result records and the
report.json shape. In: CoupledSet, rules, net roles. Out: :class:`scanner.scoring.results.ScanResult`.
"""
