"""The board model every importer produces and every later stage reads.

Plain data with numpy inside. Geometry in millimetres, board coordinates as
the fabrication files give them (x to the right, y up, seen from the top).
Net ids index ``Board.nets``; ``NO_NET`` (-1) marks copper without a net.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

NO_NET = -1

#: chord tolerance used when arcs are flattened to straight segments (mm)
ARC_CHORD_TOLERANCE_MM = 0.002


def _f(a) -> np.ndarray:
    return np.ascontiguousarray(a, dtype=np.float64)


def _i(a) -> np.ndarray:
    return np.ascontiguousarray(a, dtype=np.int32)


@dataclass(frozen=True)
class TraceSegments:
    """Straight trace draws on one copper layer, as parallel arrays (mm)."""

    x0: np.ndarray
    y0: np.ndarray
    x1: np.ndarray
    y1: np.ndarray
    width: np.ndarray
    net: np.ndarray

    def __post_init__(self):
        for name in ("x0", "y0", "x1", "y1", "width"):
            object.__setattr__(self, name, _f(getattr(self, name)))
        object.__setattr__(self, "net", _i(self.net))
        n = len(self.x0)
        if any(len(getattr(self, k)) != n for k in ("y0", "x1", "y1", "width", "net")):
            raise ValueError("TraceSegments arrays differ in length")

    @classmethod
    def empty(cls) -> "TraceSegments":
        z = np.zeros(0)
        return cls(z, z, z, z, z, np.zeros(0, dtype=np.int32))

    @classmethod
    def concat(cls, parts: list["TraceSegments"]) -> "TraceSegments":
        if not parts:
            return cls.empty()
        return cls(*(np.concatenate([getattr(p, k) for p in parts])
                     for k in ("x0", "y0", "x1", "y1", "width", "net")))

    def __len__(self) -> int:
        return len(self.x0)

    @property
    def length_mm(self) -> np.ndarray:
        return np.hypot(self.x1 - self.x0, self.y1 - self.y0)

    def select(self, mask) -> "TraceSegments":
        return TraceSegments(*(getattr(self, k)[mask] for k in ("x0", "y0", "x1", "y1", "width", "net")))

    def with_nets(self, net: np.ndarray) -> "TraceSegments":
        return TraceSegments(self.x0, self.y0, self.x1, self.y1, self.width, net)


@dataclass(frozen=True)
class CopperShapes:
    """Flashes (pads, via lands) and regions (pours) on one layer as shapely geometry.

    ``role`` is one of "pad", "via", "region", "other" (from X2 ``.AperFunction``
    where present, else from the object type).
    """

    geometry: np.ndarray  # object array of shapely geometries
    net: np.ndarray
    role: np.ndarray  # object array of str

    def __post_init__(self):
        object.__setattr__(self, "geometry", np.asarray(self.geometry, dtype=object))
        object.__setattr__(self, "net", _i(self.net))
        object.__setattr__(self, "role", np.asarray(self.role, dtype=object))

    @classmethod
    def empty(cls) -> "CopperShapes":
        return cls(np.zeros(0, dtype=object), np.zeros(0, dtype=np.int32), np.zeros(0, dtype=object))

    def __len__(self) -> int:
        return len(self.geometry)

    def with_nets(self, net: np.ndarray) -> "CopperShapes":
        return CopperShapes(self.geometry, net, self.role)


@dataclass
class CopperLayer:
    """One copper layer in stack order (index 0 is the top)."""

    name: str
    index: int
    side: str  # "top" | "inner" | "bottom"
    kind: str  # "signal" | "plane"
    kind_source: str  # where "kind" came from: "gerber-x2", "job-file", "board-file", "fill-ratio", "odbpp-matrix"
    path: str | None
    segments: TraceSegments
    shapes: CopperShapes
    fill_ratio: float | None = None
    kind_evidence: str = ""  # in words, why the layer is a plane or a signal layer (shown by inspect)

    @property
    def trace_length_mm(self) -> float:
        return float(self.segments.length_mm.sum())


@dataclass(frozen=True)
class Holes:
    """Drilled holes (mm). ``net`` is filled by the net map for plated holes."""

    x: np.ndarray
    y: np.ndarray
    diameter: np.ndarray
    plated: np.ndarray  # bool
    net: np.ndarray

    def __post_init__(self):
        for name in ("x", "y", "diameter"):
            object.__setattr__(self, name, _f(getattr(self, name)))
        object.__setattr__(self, "plated", np.ascontiguousarray(self.plated, dtype=bool))
        object.__setattr__(self, "net", _i(self.net))

    @classmethod
    def empty(cls) -> "Holes":
        z = np.zeros(0)
        return cls(z, z, z, np.zeros(0, dtype=bool), np.zeros(0, dtype=np.int32))

    def __len__(self) -> int:
        return len(self.x)


@dataclass(frozen=True)
class NetlistPoints:
    """IPC-D-356 test points: 317 (through/via), 327 (surface) and 378 (conductor) records (mm).

    ``layer`` is the copper layer index the point is on, or -1 for a through point
    reaching every layer.
    """

    net_name: np.ndarray  # object array of str
    x: np.ndarray
    y: np.ndarray
    layer: np.ndarray
    hole_mm: np.ndarray  # 0 for surface points
    record: np.ndarray  # 317, 327 or 378
    line: np.ndarray  # line number in the netlist file

    def __len__(self) -> int:
        return len(self.x)


@dataclass(frozen=True)
class StackupLayer:
    kind: str  # "copper" | "dielectric" | "soldermask"
    name: str
    thickness_mm: float
    epsilon_r: float | None = None
    copper_index: int | None = None  # for copper: index into Board.layers


@dataclass(frozen=True)
class Stackup:
    """Physical build, top to bottom. ``source`` says where it came from."""

    layers: tuple[StackupLayer, ...]
    source: str  # "job-file", "odbpp-job", "rules", "stackup-file", "board-file", "default"
    path: str | None = None  # the file it was read from, as shown in messages

    @property
    def total_thickness_mm(self) -> float:
        return float(sum(layer.thickness_mm for layer in self.layers))

    def copper(self) -> list[StackupLayer]:
        return [layer for layer in self.layers if layer.kind == "copper"]


@dataclass(frozen=True)
class NetFault:
    """A short (several netlist names on one piece of copper) or an open (one net split, or a point on no copper)."""

    kind: str  # "short" | "open"
    nets: tuple[str, ...]
    x_mm: float
    y_mm: float
    layer: str | None
    detail: str


@dataclass
class Netting:
    """How nets were assigned and how well the copper matched the netlist."""

    method: str  # "gerber-x2" | "odbpp-eda" | "netlist+connectivity" | "connectivity"
    netted_trace_fraction: float
    netlist_points_matched: int
    netlist_points_total: int
    faults: list[NetFault] = field(default_factory=list)
    synthetic_nets: int = 0  # islands no netlist point or X2 name reached, named ``~Lnn@x,y``
    islands: int = 0  # copper islands found (after joining through plated holes)

    @property
    def shorts(self) -> list[NetFault]:
        return [f for f in self.faults if f.kind == "short"]

    @property
    def opens(self) -> list[NetFault]:
        return [f for f in self.faults if f.kind == "open"]


@dataclass(frozen=True)
class LeftOut:
    """Copper left out of nets and of the search because it lies outside the board (film frames,
    title blocks, text, tooling marks, coupons)."""

    objects: int = 0
    trace_length_mm: float = 0.0
    layers: tuple[str, ...] = ()


@dataclass
class Board:
    name: str
    source: str
    format: str  # e.g. "gerber-x2", "gerber-x1", "gerber-x1+ipc-d-356", "odbpp"
    layers: list[CopperLayer]
    nets: list[str]
    holes: Holes
    stackup: Stackup | None = None
    netting: Netting | None = None
    outline: object | None = None  # shapely geometry of the board outline when known
    netlist: NetlistPoints | None = None
    warnings: list[str] = field(default_factory=list)
    left_out: LeftOut = field(default_factory=LeftOut)
    #: what the import could not establish in full (an unreadable drill file that split nets, a netlist
    #: matching under half its points, ...): each reason makes the scan's verdict incomplete
    incomplete: list[str] = field(default_factory=list)

    def net_id(self, name: str) -> int:
        try:
            return self.nets.index(name)
        except ValueError:
            return NO_NET

    def layer(self, name_or_index) -> CopperLayer:
        for layer in self.layers:
            if layer.index == name_or_index or layer.name == name_or_index:
                return layer
        raise KeyError(name_or_index)

    @property
    def signal_layers(self) -> list[CopperLayer]:
        return [layer for layer in self.layers if layer.kind == "signal"]

    @property
    def segment_count(self) -> int:
        return sum(len(layer.segments) for layer in self.layers)
