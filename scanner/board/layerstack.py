"""From a board's stackup and plane layers to the cross-section seen by each signal layer.

The stackup lists copper, dielectric and soldermask top to bottom. For a
signal layer we look toward each side for the nearest reference plane:
planes on both sides make a stripline (symmetric or offset), a plane on one
side and the board surface on the other a microstrip. Signal copper between
the trace and a plane counts as dielectric (the neighbouring laminate's
permittivity); this is the usual simplification for dual striplines.

A board with no plane at all (most 2-layer boards) is still scanned: each
layer is referenced to the far copper side of the board (the outer copper
layer farther from it), described as a pour when that side carries one. A
distant reference couples neighbouring traces more strongly than a near
plane, so the figures err on the high side for traces that do have copper
beneath them. Traces drawn on a plane layer (signals routed through a gap in
the pour) are scanned too, referenced as if their own layer were not a plane.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from scanner.board.model import Board, CopperLayer, CopperShapes, Holes, Stackup, StackupLayer, TraceSegments
from scanner.errors import InputError
from scanner.input_limits import range_problem

#: stated default when nothing gives a stackup: a typical symmetric FR-4 class build (common practice;
#: the figures are typical fabricator values, from memory): 1.6 mm up to 12 copper layers, thicker above
DEFAULT_TOTAL_THICKNESS_MM = ((12, 1.6), (18, 2.0), (None, 2.4))
DEFAULT_OUTER_COPPER_MM = 0.035
DEFAULT_INNER_COPPER_MM = 0.018
#: thin prepreg between each outer layer and its neighbour: one ply at 4 layers, a thinner one above
DEFAULT_OUTER_PREPREG_MM = ((4, 0.2), (None, 0.1))
DEFAULT_PREPREG_EPSILON_R = 4.1
DEFAULT_CORE_EPSILON_R = 4.4
DEFAULT_SOLDERMASK = (0.02, 3.8)
#: permittivity taken for copper walked through when no laminate has been passed yet
DEFAULT_EPSILON_R = DEFAULT_PREPREG_EPSILON_R

#: a far-side layer whose pours cover at least this share of the board is called a pour in the reports
POUR_FILL_RATIO = 0.2


@dataclass(frozen=True)
class LayerReference:
    """What a layer's traces are referenced to.

    ``kind``: "plane" (the nearest plane layer on each side that has one), "pour" or "far side" (no plane
    on the board: the outer copper layer on the far side stands in, described as a pour when it carries
    one). ``layers``: the reference copper layers, nearer first.
    """

    kind: str
    layers: tuple[int, ...]


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
    reference: LayerReference
    on_plane: bool = False  # traces drawn on a plane layer (routed through a gap in its pour)

    @property
    def height_mm(self) -> float:
        """Distance from the trace base to its reference plane."""
        return sum(t for t, _ in self.toward_plane)


def default_stackup(copper_count: int) -> Stackup:
    """A typical symmetric build of ``copper_count`` copper layers (stated as an assumption wherever it is used).

    From the top: soldermask, outer copper, a thin prepreg, then cores and prepregs in turn (each core carries
    two inner copper layers), a thin prepreg, outer copper, soldermask. Cores and inner prepregs share the
    thickness left over equally. Up to three copper layers there is no prepreg: the dielectrics are cores.
    """
    if copper_count < 1:
        raise InputError("board has no copper layers to build a stackup for")
    outer, inner, laminate = _default_dielectrics(copper_count)
    gaps = copper_count - 1
    sm_t, sm_er = DEFAULT_SOLDERMASK
    if range_problem("dielectric thickness", inner, "") is not None:
        raise InputError(f"board has {copper_count} copper layers, too many to assume the default "
                         f"{_by_count(DEFAULT_TOTAL_THICKNESS_MM, copper_count)} mm stackup; give a job file or a "
                         "[stackup] in the rules")
    layers = [StackupLayer("soldermask", "top mask", sm_t, sm_er)]
    for i in range(copper_count):
        edge = i in (0, copper_count - 1)
        layers.append(StackupLayer("copper", f"copper {i + 1}",
                                   DEFAULT_OUTER_COPPER_MM if edge else DEFAULT_INNER_COPPER_MM, None, i))
        if i == gaps:
            break
        if copper_count >= 4 and i in (0, gaps - 1):
            layers.append(StackupLayer("dielectric", f"prepreg {i + 1}-{i + 2}", outer, DEFAULT_PREPREG_EPSILON_R))
        elif copper_count < 4 or i % 2:
            layers.append(StackupLayer("dielectric", f"core {i + 1}-{i + 2}", inner, DEFAULT_CORE_EPSILON_R))
        else:
            layers.append(StackupLayer("dielectric", f"prepreg {i + 1}-{i + 2}", inner, DEFAULT_PREPREG_EPSILON_R))
    if copper_count == 1:
        layers.append(StackupLayer("dielectric", "core", laminate, DEFAULT_CORE_EPSILON_R))
    else:
        layers.append(StackupLayer("soldermask", "bottom mask", sm_t, sm_er))
    return Stackup(tuple(layers), source="default")


def describe_default(copper_count: int) -> str:
    """The assumed build of ``default_stackup(copper_count)`` in one line, with its values."""
    outer, inner, laminate = _default_dielectrics(copper_count)
    total = _by_count(DEFAULT_TOTAL_THICKNESS_MM, copper_count)
    sm_t, sm_er = DEFAULT_SOLDERMASK
    core = f"(er {DEFAULT_CORE_EPSILON_R:g})"
    if copper_count > 4:
        build = (f"prepreg {outer:.3f} mm (er {DEFAULT_PREPREG_EPSILON_R:g}) under each outer layer, then cores "
                 f"{core} and prepregs (er {DEFAULT_PREPREG_EPSILON_R:g}) of {inner:.3f} mm in turn")
    elif copper_count == 4:
        build = (f"prepreg {outer:.3f} mm (er {DEFAULT_PREPREG_EPSILON_R:g}) under each outer layer, a core of "
                 f"{inner:.3f} mm {core} between")
    else:
        build = f"core{'s' if copper_count > 2 else ''} of {inner if copper_count > 1 else laminate:.3f} mm {core}"
    copper = f"{DEFAULT_OUTER_COPPER_MM * 1000:.0f} µm" + (
        f" outer, {DEFAULT_INNER_COPPER_MM * 1000:.0f} µm inner" if copper_count > 2 else "")
    return (f"{copper_count} copper layer{'s' if copper_count > 1 else ''} in {total:g} mm: {build}; copper "
            f"{copper}; soldermask {sm_t * 1000:.0f} µm (er {sm_er:g})")


def _layers_text(count: int) -> str:
    return f"{count} copper layer{'' if count == 1 else 's'}"


def _default_dielectrics(copper_count: int) -> tuple[float, float, float]:
    """(outer prepreg, inner dielectric, all laminate) thickness in mm for the default build."""
    masks = 2 if copper_count > 1 else 1
    copper = 2 * DEFAULT_OUTER_COPPER_MM + (copper_count - 2) * DEFAULT_INNER_COPPER_MM if copper_count > 1 \
        else DEFAULT_OUTER_COPPER_MM
    laminate = _by_count(DEFAULT_TOTAL_THICKNESS_MM, copper_count) - masks * DEFAULT_SOLDERMASK[0] - copper
    gaps = copper_count - 1
    if copper_count < 4:
        return 0.0, laminate / max(gaps, 1), laminate
    outer = _by_count(DEFAULT_OUTER_PREPREG_MM, copper_count)
    return outer, (laminate - 2 * outer) / (gaps - 2), laminate


def _by_count(table: tuple, copper_count: int) -> float:
    """The value for ``copper_count`` from ((up to this many layers, value), ..., (None, value))."""
    return next(value for most, value in table if most is None or copper_count <= most)


def effective_stackup(board: Board, override: Stackup | None) -> tuple[Stackup, list[str]]:
    """The stackup to use: the override (a stackup file or the rules), else the board's, else the stated default."""
    warnings = []
    stackup = override or board.stackup
    if stackup is None:
        stackup = default_stackup(len(board.layers))
        warnings.append(
            f"NO STACKUP GIVEN: assumed a typical symmetric build, {describe_default(len(board.layers))}; "
            "crosstalk and impedance figures depend on it - give the real one with --stackup FILE (CSV or TOML) or [stackup] "
            "in the rules, and check it with 'nearfar stackup'")
    n_copper = len(stackup.copper())
    if n_copper != len(board.layers):
        raise InputError(f"the stackup ({stackup.source}) has {_layers_text(n_copper)} but the board has "
                         f"{_layers_text(len(board.layers))}", stackup.path)
    return stackup, warnings


@dataclass(frozen=True)
class BoardEnvironments:
    """The stackup in use and the role of each copper layer.

    ``signal``: cross-section environment of every layer whose traces are searched (signal layers, and plane
    layers that carry traces); ``skipped``: layers left out of the search, with the reason;
    ``broadside``: dual-stripline layer pairs; ``warnings``: what was assumed or left out.
    """

    stackup: Stackup
    plane_layers: frozenset[int]
    signal: dict[int, LayerEnvironment]
    broadside: dict[tuple[int, int], BroadsideEnvironment]
    warnings: tuple[str, ...]
    skipped: dict[int, str] = field(default_factory=dict)


def board_environments(board: Board, stackup_override: Stackup | None, named_planes=(),
                       skip_layers=()) -> BoardEnvironments:
    """Stackup, plane layers (from the board, plus any the rules name) and each scanned layer's environment.

    ``skip_layers``: copper layer names the rules leave out of the search."""
    plane_layers = frozenset(layer.index for layer in board.layers
                             if layer.kind == "plane" or layer.name in named_planes)
    stackup, warnings = effective_stackup(board, stackup_override)
    envs = layer_environments(board, stackup, plane_layers)
    skipped = {}
    for layer in board.layers:
        if layer.name in skip_layers:
            skipped[layer.index] = "skipped by the rules ([scan] skip_layers)"
        elif layer.index not in envs and (layer.index not in plane_layers or len(layer.segments)):
            skipped[layer.index] = "the only copper layer: no plane or far side to reference it to"
    envs = {i: e for i, e in envs.items() if i not in skipped}
    for i, why in skipped.items():
        if len(board.layers[i].segments):
            warnings.append(f"layer {board.layers[i].name} not scanned: {why}")
    far = [board.layers[i].name for i, e in envs.items() if e.reference.kind != "plane"]
    if far:
        warnings.append(f"{', '.join(far)} referenced to the far side of the board, having no plane beside "
                        f"{'it' if len(far) == 1 else 'them'} (coupling is stronger than over a plane; name the "
                        f"planes with 'planes' in the rules if the files do not say which layers they are)")
    broadside = broadside_environments(board, stackup, envs, plane_layers)
    return BoardEnvironments(stackup, plane_layers, envs, broadside, tuple(warnings), skipped)


def stackup_environments(stackup: Stackup, plane_layers) -> BoardEnvironments:
    """The environments of a stackup on its own, without board files: copper layers take the stackup's names,
    those in ``plane_layers`` (copper indices) are planes and the rest signal layers."""
    count = len(stackup.copper())
    layers = [CopperLayer(s.name, s.copper_index, "top" if s.copper_index == 0 else
                          "bottom" if s.copper_index == count - 1 else "inner",
                          "plane" if s.copper_index in plane_layers else "signal", "stackup", None,
                          TraceSegments.empty(), CopperShapes.empty()) for s in stackup.copper()]
    return board_environments(Board("stackup", stackup.path or stackup.source, "stackup", layers, [], Holes.empty()),
                              stackup)


def layer_environments(board: Board, stackup: Stackup, plane_layers: set[int]) -> dict[int, LayerEnvironment]:
    """Cross-section environment of every signal layer, and of every plane layer that carries traces.

    The nearest plane on each side is the reference; a board without one is referenced to its far side.
    A single copper layer has nothing to reference to and gets no environment."""
    items = list(stackup.layers)
    copper_pos = [i for i, item in enumerate(items) if item.kind == "copper"]
    envs = {}
    for layer in board.layers:
        on_plane = layer.index in plane_layers
        if on_plane and not len(layer.segments):
            continue
        pos = copper_pos[layer.index]
        others = set(plane_layers) - {layer.index}
        kind = "plane"
        if not others:
            far = _far_side(items, copper_pos, layer.index)
            if far is None:
                continue
            others = {far}
            fill = board.layers[far].fill_ratio
            kind = "pour" if fill is not None and fill >= POUR_FILL_RATIO else "far side"
        below = _walk(items, pos, +1, others)
        above = _walk(items, pos, -1, others)
        thickness = items[pos].thickness_mm
        if below.plane and above.plane:
            # reference on the nearer side; the trace base faces it, and the layer's own copper
            # thickness (traces embedded in laminate) belongs to the plane-to-plane distance
            near, far_walk = (below, above) if below.height <= above.height else (above, below)
            slab = (thickness, far_walk.dielectrics[0][1] if far_walk.dielectrics else near.dielectrics[0][1])
            env = LayerEnvironment(layer.index, "stripline", tuple(reversed(near.dielectrics)),
                                   (slab,) + tuple(far_walk.dielectrics), thickness, None,
                                   LayerReference(kind, (near.reached, far_walk.reached)), on_plane)
        else:
            near, far_walk = (below, above) if below.plane else (above, below)
            # the mask coats the trace only on an outer layer; beyond laminate it is one more flat layer
            mask = far_walk.dielectrics[-1] if far_walk.mask and len(far_walk.dielectrics) == 1 else None
            env = LayerEnvironment(layer.index, "microstrip", tuple(reversed(near.dielectrics)),
                                   tuple(far_walk.dielectrics), thickness, mask,
                                   LayerReference(kind, (near.reached,)), on_plane)
        envs[layer.index] = env
    return envs


def _far_side(items: list[StackupLayer], copper_pos: list[int], index: int) -> int | None:
    """The outer copper layer farther from copper layer ``index`` (the bottom on a tie); None on a one-layer board."""
    outer = [i for i in dict.fromkeys((len(copper_pos) - 1, 0)) if i != index]
    if not outer:
        return None

    def distance(i):
        lo, hi = sorted((copper_pos[i], copper_pos[index]))
        return sum(item.thickness_mm for item in items[lo + 1:hi])

    return max(outer, key=distance)


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
    striplines = sorted(i for i, e in envs.items() if e.structure == "stripline" and not e.on_plane)
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
    reached: int = -1  # the plane's copper index when ``plane``

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
                return _Walk(out, True, False, item.copper_index)
            out.append((item.thickness_mm, last_er))
        elif item.kind == "dielectric":
            last_er = item.epsilon_r
            out.append((item.thickness_mm, item.epsilon_r))
        elif item.kind == "soldermask":
            out.append((item.thickness_mm, item.epsilon_r))
            return _Walk(out, False, True)
        i += step
    return _Walk(out, False, False)
