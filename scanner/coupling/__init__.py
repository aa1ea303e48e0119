"""Coupling: geometry in, coupled runs with their per-piece coefficients out.

``finder`` searches each signal layer (and dual-stripline layer pairs) with a spatial index for
parallel pieces of copper of different nets; ``runs`` joins the pieces of one net pair into
coupled runs; ``coefficients`` looks up Kb, Kf and velocity per piece from cross-section tables
solved once per layer and width. ``stage.find_runs`` is the one call the pipeline makes.
In: Board, layer environments, net roles, scan settings. Out: :class:`scanner.coupling.stage.CoupledSet`.
"""
