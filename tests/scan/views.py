"""Reading scan results from one victim's side: a run's direction toward a victim, all directions into it."""


def seen(result, victim, aggressor):
    """The finding on the run between the two nets, read from ``victim``'s side; None when not listed."""
    for h in result.hotspots:
        if any(d.victim == victim and d.aggressor == aggressor for d in h.directions):
            return h.toward(victim)
    return None


def into(result, victim):
    """Every listed direction whose victim is ``victim``."""
    return [d for h in result.hotspots for d in h.directions if d.victim == victim]
