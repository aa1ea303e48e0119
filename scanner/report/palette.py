"""Colours and sizes shared by the overlay images, the waveform plots and the report page.

Our own palette: copper in pale warm greys so it recedes, finding status in
rose / amber / moss, the victim trace in dark teal and the aggressor in plum.
The status and trace colours differ in lightness as well as hue, and the
aggressor also carries a dashed centre line, so roles survive grey-scale printing.
"""
from __future__ import annotations

STATUS_COLOUR = {"fail": "#c0284f", "warn": "#d98a00", "pass": "#5a8a3c"}
STATUS_TEXT = {"fail": "#ffffff", "warn": "#1e1a14", "pass": "#ffffff"}
STATUS_LABEL = {"fail": "over budget", "warn": "near budget", "pass": "within budget"}

BOARD_FILL = "#f6f3ec"
BOARD_EDGE = "#6e6557"
TRACE = "#cdc5b6"
PAD = "#bfb6a5"
POUR = "#e4dfd4"
COPPER = (TRACE, PAD, POUR)
#: copper under markers on the all-layer map and on the other layers of a crop: paler still
COPPER_DIM = ("#e2dccf", "#dbd4c5", "#eeeae2")
BACKGROUND = "#ffffff"
INK = "#2b2620"
LEADER = "#4a443b"

VICTIM = "#0d5c68"
AGGRESSOR = "#7b3f8c"
AGGRESSOR_DASH = "#f2e9f5"

NEAR_END = "#0d5c68"
FAR_END = "#b3471d"
EDGE = "#8c8478"
BUDGET_BAND = "#e9efe4"
BUDGET_LINE = "#5a8a3c"
#: dimension marks and net-name labels on the close-ups
DIMENSION = "#3d5a80"
