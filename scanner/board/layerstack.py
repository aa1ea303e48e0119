"""From a board's stackup and plane layers to the cross-section seen by each signal layer.

The stackup lists copper, dielectric and soldermask top to bottom. For a
signal layer we look toward each side for the nearest reference plane:
planes on both sides make a stripline (symmetric or offset), a plane on one
side and the board surface on the other a microstrip. Signal copper between
the trace and a plane counts as dielectric (the neighbouring laminate's
permittivity); this is the usual simplification for dual striplines.
"""
from __future__ import annotations

from dataclasses import dataclass

from scanner.board.model import Board, Stackup, StackupLayer
from scanner.errors import InputError
from scanner.input_limits import range_problem

#: stated default when nothing gives a stackup (typical FR-4 class build; common practice)
DEFAULT_TOTAL_THICKNESS_MM = 1.6
DEFAULT_OUTER_COPPER_MM = 0.035
DEFAULT_INNER_COPPER_MM = 0.018
DEFAULT_EPSILON_R = 4.2
DEFAULT_SOLDERMASK = (0.02, 3.8)


@dataclass(frozen=True)
class LayerEnvironment:
    """Dielectrics around one signal layer, ordered outward from the trace.

    ``toward_plane``: (thickness_mm, epsilon_r) from the trace's base down to its
    reference plane, listed from the plane up. ``away``: from the trace's base
    outward to the second plane (stripline) or to the surface (microstrip),
    listed from the trace outward; for a microstrip the last entry may be soldermask.
    """

    layer_index: int
    structure: str  # "microstrip" | "stripline"
    toward_plane: tuple[tuple[float, float], ...]
    away: tuple[tuple[float, float], ...]
    trace_thickness_mm: float
    soldermask: tuple[float, float] | None  # (thickness_mm, epsilon_r) over an outer-layer trace

    @property
    def height_mm(self) -> float:
        """Distance from the trace base to its reference plane."""
        return sum(t for t, _ in self.toward_plane)


def default_stackup(copper_count: int) -> Stackup:
    """A plain, evenly spaced build of ``copper_count`` layers, 1.6 mm overall, er 4.2."""
    if copper_count < 1:
        raise InputError("board has no copper layers to build a stackup for")
    sm_t, sm_er = DEFAULT_SOLDERMASK
    copper_t = [DEFAULT_OUTER_COPPER_MM if i in (0, copper_count - 1) else DEFAULT_INNER_COPPER_MM
                for i in range(copper_count)]
    gaps = max(copper_count - 1, 1)
    diel_t = (DEFAULT_TOTAL_THICKNESS_MM - 2 * sm_t - sum(copper_t)) / gaps
    if range_problem("dielectric thickness", diel_t, "") is not None:
        raise InputError(f"board has {copper_count} copper layers, too many to assume the default "
                         f"{DEFAULT_TOTAL_THICKNESS_MM} mm stackup; give a job file or a [stackup] in the rules")
    layers = [StackupLayer("soldermask", "top mask", sm_t, sm_er)]
    for i in range(copper_count):
        layers.append(StackupLayer("copper", f"copper {i + 1}", copper_t[i], None, i))
        if i < copper_count - 1:
            layers.append(StackupLayer("dielectric", f"dielectric {i + 1}", diel_t, DEFAULT_EPSILON_R))
    layers.append(StackupLayer("soldermask", "bottom mask", sm_t, sm_er))
    return Stackup(tuple(layers), source="default")


def effective_stackup(board: Board, override: Stackup | None) -> tuple[Stackup, list[str]]:
    """The stackup to use: the rules' override, else the board's, else the stated default."""
    warnings = []
    stackup = override or board.stackup
    if stackup is None:
        stackup = default_stackup(len(board.layers))
        warnings.append(
            f"NO STACKUP GIVEN: assumed {len(board.layers)} copper layers evenly spaced in "
            f"{DEFAULT_TOTAL_THICKNESS_MM} mm of er {DEFAULT_EPSILON_R} laminate; crosstalk figures "
            "depend on it — give a job file or a [stackup] in the rules")
    n_copper = len(stackup.copper())
    if n_copper != len(board.layers):
        raise InputError(
            f"stackup ({stackup.source}) has {n_copper} copper layers but the board has {len(board.layers)}")
    return stackup, warnings


@dataclass(frozen=True)
class BoardEnvironments:
    """The stackup in use and the role of each copper layer.

    ``signal``: cross-section environment of every signal layer that will be scanned;
    ``broadside``: dual-stripline layer pairs; ``warnings``: what was assumed or left out.
    """

    stackup: Stackup
    plane_layers: frozenset[int]
    signal: dict[int, LayerEnvironment]
    broadside: dict[tuple[int, int], BroadsideEnvironment]
    warnings: tuple[str, ...]


def board_environments(board: Board, stackup_override: Stackup | None, named_planes=()) -> BoardEnvironments:
    """Stackup, plane layers (from the board, plus any the rules name) and each signal layer's environment."""
    plane_layers = frozenset(layer.index for layer in board.layers
                             if layer.kind == "plane" or layer.name in named_planes)
    stackup, warnings = effective_stackup(board, stackup_override)
    envs = layer_environments(board, stackup, plane_layers)
    for layer in board.layers:
        if layer.index not in plane_layers and layer.index not in envs and len(layer.segments):
            warnings.append(f"layer {layer.name} has no reference plane on either side; not scanned")
    broadside = broadside_environments(board, stackup, envs, plane_layers)
    return BoardEnvironments(stackup, plane_layers, envs, broadside, tuple(warnings))


def layer_environments(board: Board, stackup: Stackup, plane_layers: set[int]) -> dict[int, LayerEnvironment]:
    """Cross-section environment of every signal layer that has a reference plane."""
    items = list(stackup.layers)
    copper_pos = [i for i, item in enumerate(items) if item.kind == "copper"]
    envs = {}
    for layer in board.layers:
        if layer.index in plane_layers:
            continue
        pos = copper_pos[layer.index]
        below = _walk(items, pos, +1, plane_layers)
        above = _walk(items, pos, -1, plane_layers)
        thickness = items[pos].thickness_mm
        if below.plane and above.plane:
            # reference on the nearer side; the trace base faces it, and the layer's own copper
            # thickness (traces embedded in laminate) belongs to the plane-to-plane distance
            near, far = (below, above) if below.height <= above.height else (above, below)
            slab = (thickness, far.dielectrics[0][1] if far.dielectrics else near.dielectrics[0][1])
            env = LayerEnvironment(layer.index, "stripline", tuple(reversed(near.dielectrics)),
                                   (slab,) + tuple(far.dielectrics), thickness, None)
        elif below.plane or above.plane:
            near, far = (below, above) if below.plane else (above, below)
            mask = far.dielectrics[-1] if far.mask else None
            env = LayerEnvironment(layer.index, "microstrip", tuple(reversed(near.dielectrics)),
                                   tuple(far.dielectrics), thickness, mask)
        else:
            continue
        envs[layer.index] = env
    return envs


@dataclass(frozen=True)
class BroadsideEnvironment:
    """Two signal layers between the same pair of planes with no plane between them (dual stripline).

    ``dielectrics``: (thickness_mm, epsilon_r) from the lower plane up to the upper one, copper
    layers counted as laminate; ``base_mm``: height of each layer's trace base above the lower
    plane, for (``upper``, ``lower``).
    """

    upper: int
    lower: int
    dielectrics: tuple[tuple[float, float], ...]
    base_mm: tuple[float, float]
    thickness_mm: tuple[float, float]


def broadside_environments(board: Board, stackup: Stackup, envs: dict[int, LayerEnvironment],
                           plane_layers: set[int]) -> dict[tuple[int, int], BroadsideEnvironment]:
    """Pairs of stripline signal layers that share both planes: their traces couple through the laminate."""
    items = list(stackup.layers)
    copper_pos = [i for i, item in enumerate(items) if item.kind == "copper"]
    striplines = sorted(i for i, e in envs.items() if e.structure == "stripline")
    out = {}
    for a in striplines:
        for b in striplines:
            if b <= a or any(a < k < b for k in plane_layers):
                continue
            top = max(k for k in plane_layers if k < a)
            bottom = min(k for k in plane_layers if k > b)
            stack, base = _plane_to_plane(items, copper_pos[top], copper_pos[bottom])
            out[(a, b)] = BroadsideEnvironment(a, b, stack, (base[copper_pos[a]], base[copper_pos[b]]),
                                               (items[copper_pos[a]].thickness_mm, items[copper_pos[b]].thickness_mm))
    return out


def _plane_to_plane(items: list[StackupLayer], top_pos: int, bottom_pos: int):
    """Dielectrics from the lower plane up (copper as laminate of the layer below it) and each copper item's
    base height above the lower plane."""
    stack: list[tuple[float, float]] = []
    base: dict[int, float] = {}
    height = 0.0
    last_er = DEFAULT_EPSILON_R
    for pos in range(bottom_pos - 1, top_pos, -1):
        item = items[pos]
        if item.kind == "copper":
            base[pos] = height
            stack.append((item.thickness_mm, last_er))
        else:
            last_er = item.epsilon_r
            stack.append((item.thickness_mm, item.epsilon_r))
        height += item.thickness_mm
    return tuple(stack), base


@dataclass
class _Walk:
    dielectrics: list[tuple[float, float]]
    plane: bool
    mask: bool

    @property
    def height(self) -> float:
        return sum(t for t, _ in self.dielectrics)


def _walk(items: list[StackupLayer], pos: int, step: int, plane_layers: set[int]) -> _Walk:
    """From copper item ``pos`` outward until a plane or the surface; list (t, er) from the trace outward."""
    out: list[tuple[float, float]] = []
    i = pos + step
    last_er = DEFAULT_EPSILON_R
    while 0 <= i < len(items):
        item = items[i]
        if item.kind == "copper":
            if item.copper_index in plane_layers:
                return _Walk(out, True, False)
            out.append((item.thickness_mm, last_er))
        elif item.kind == "dielectric":
            last_er = item.epsilon_r
            out.append((item.thickness_mm, item.epsilon_r))
        elif item.kind == "soldermask":
            out.append((item.thickness_mm, item.epsilon_r))
            return _Walk(out, False, True)
        i += step
    return _Walk(out, False, False)
