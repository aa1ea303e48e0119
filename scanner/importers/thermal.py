"""The thermal macro primitive (code 7), as the Gerber Layer Format Specification defines it.

gerbonara 1.5 declares the primitive with an extra leading exposure parameter,
so every parameter after the first lands one place off, and its drawing code
refers to names that do not exist: flashing any aperture with a thermal fails.
Relief pads on plane layers use thermals, so we register this definition in
its place: parameters centre x, centre y, outer diameter, inner diameter, gap
thickness, rotation (degrees counter-clockwise about the macro origin); the
shape is the ring between the two diameters with two perpendicular gaps cut
through it (Gerber Layer Format Specification, section on aperture macro
primitives; from memory of revision 2020.09 and later).
"""
from __future__ import annotations

from dataclasses import dataclass, replace

from gerbonara import graphic_primitives as gp
from gerbonara.aperture_macros import primitive as macro_primitive
from gerbonara.aperture_macros.expression import Expression, UnitExpression
from gerbonara.utils import rotate_point


@dataclass(frozen=True, slots=True)
class Thermal(macro_primitive.Primitive):
    code = 7
    x: UnitExpression
    y: UnitExpression
    d_outer: UnitExpression
    d_inner: UnitExpression
    gap_w: UnitExpression
    rotation: Expression = 0

    def to_graphic_primitives(self, offset, rotation, variable_binding={}, unit=None, polarity_dark=True):
        with self.Calculator(self, variable_binding, unit) as calc:
            if not 0 <= calc.d_inner < calc.d_outer or not 0 <= calc.gap_w < calc.d_outer:
                raise ValueError("thermal primitive needs 0 <= inner diameter < outer diameter and a gap "
                                 "narrower than the outer diameter")
            rotation += macro_primitive.deg_to_rad(calc.rotation)
            x, y = rotate_point(calc.x, calc.y, -rotation, 0, 0)
            x, y = x + offset[0], y + offset[1]
            d, g = calc.d_outer, calc.gap_w
            return [gp.Circle(x, y, d / 2, polarity_dark=polarity_dark),
                    gp.Circle(x, y, calc.d_inner / 2, polarity_dark=not polarity_dark),
                    gp.Rectangle(x, y, d, g, rotation=rotation, polarity_dark=not polarity_dark),
                    gp.Rectangle(x, y, g, d, rotation=rotation, polarity_dark=not polarity_dark)]

    def scaled(self, scale):
        return replace(self, **{name: getattr(self, name) * UnitExpression(scale)
                                for name in ("x", "y", "d_outer", "d_inner", "gap_w")})


def register() -> None:
    """Make gerbonara's macro parser build this primitive for code 7."""
    macro_primitive.PRIMITIVE_CLASSES[Thermal.code] = Thermal
