"""The board model: what every importer produces and every later stage reads.

``model`` holds the plain-data :class:`~scanner.board.model.Board` (copper layers with trace
segments and shapes as numpy arrays, holes, netlist points, stackup, netting statistics);
``netmap`` names copper by connectivity when the files carry no net names; ``roles`` gives each
net its class, power/ground role and differential partner from the rules; ``layerstack`` turns
the stackup and the plane layers into the cross-section environment of each signal layer.
In: files already parsed by an importer, and the rules. Out: a Board, net roles, layer environments.
"""
