"""``nearfar section``: solve one cross-section and show its line matrices and crosstalk figures."""
from __future__ import annotations

import json
from pathlib import Path

import click
import numpy as np

from scanner.board.layerstack import stackup_environments
from scanner.commands.options import stackup_option, stackup_override
from scanner.coupling.coefficients import section_arguments
from scanner.physics import (WEAK_COUPLING_LIMIT, Soldermask, coupling_coefficients, piecewise_peaks,
                             saturation_length_m, solve_cross_section, traces_on_layer, weak_coupling_holds)
from scanner.input_limits import check_finite, check_range
from scanner.physics.crosstalk import TERMINATIONS
from scanner.rules import DEFAULT_CLASS
from scanner.units import M_PER_MM, S_PER_NS

PLOT_FORMATS = (".png", ".svg", ".pdf")
PLOT_DPI = 150


class Physical(click.ParamType):
    """A number within its physical range (scanner.input_limits.RANGES); outside it, one line and exit status 2."""

    name = "number"

    def __init__(self, kind: str, zero_allowed: bool = False):
        self.kind = kind
        self.zero_allowed = zero_allowed

    def convert(self, value, param, ctx):
        if isinstance(value, float):
            return value
        try:
            number = float(value)
        except ValueError:
            self.fail(f"{value!r} is not a number", param, ctx)
        if self.zero_allowed and number == 0:
            return 0.0
        return check_range(self.kind, number, param.opts[0] if param else self.kind)



def _gaps(widths, spacings):
    """Widths and edge gaps for ``traces_on_layer`` (one width and a spacing: a pair)."""
    if not widths:
        raise click.UsageError("give at least one --width")
    if len(spacings) > 1 and len(spacings) != len(widths) - 1:
        raise click.UsageError(f"{len(widths)} traces need {len(widths) - 1} --spacing values (or one for all)")
    if len(widths) == 1 and spacings:
        widths = widths * 2
    if len(widths) > 1 and not spacings:
        raise click.UsageError("several traces need --spacing")
    return list(widths), list(spacings) * (len(widths) - 1) if len(spacings) == 1 else list(spacings)


def _build(widths, spacings, copper, height_below, er_below, height_above, er_above, planes, mask, mask_er):
    if height_below is None:
        raise click.UsageError("give --height-below (or --stackup FILE with --layer)")
    if planes is None:
        planes = "both" if height_above is not None else "below"
    if planes == "both" and height_above is None:
        raise click.UsageError("--planes both needs --height-above (the dielectric up to the upper plane)")
    if planes == "both" and mask is not None:
        raise click.UsageError("--mask applies to microstrip (--planes below) only")
    if mask is not None and height_above is not None:
        raise click.UsageError("give either --mask or --height-above for a microstrip, not both")
    widths, gaps = _gaps(widths, spacings)
    above = [] if height_above is None else [(height_above, er_above or er_below)]
    soldermask = None if mask is None else Soldermask(mask, mask_er)
    try:
        return traces_on_layer([(height_below, er_below)], above, planes, widths, gaps, copper, soldermask)
    except ValueError as exc:
        raise click.UsageError(str(exc)) from exc


#: options that describe the layer by hand, which a stackup file replaces
HAND_OPTIONS = ("copper", "height_below", "er_below", "height_above", "er_above", "planes", "mask", "mask_er")


def _from_stackup(ctx: click.Context, path, layer: str | None, plane_names: str | None, widths, spacings):
    """The cross-section of one copper layer of a stackup file, and a line saying what it is."""
    given = [f"--{k.replace('_', '-')}" for k in HAND_OPTIONS
             if ctx.get_parameter_source(k) == click.core.ParameterSource.COMMANDLINE]
    if given:
        raise click.UsageError(f"{', '.join(given)} cannot be combined with --stackup (the stackup gives the layer)")
    if layer is None:
        raise click.UsageError("--stackup needs --layer (a copper layer name or number from the stackup)")
    stackup = stackup_override(path)
    copper = stackup.copper()
    index = _copper_index(copper, layer, "--layer")
    planes = ({_copper_index(copper, p.strip(), "--plane-layers") for p in plane_names.split(",") if p.strip()}
              if plane_names else {s.copper_index for s in copper} - {index})
    if index in planes:
        raise click.UsageError(f"--layer {layer} is also named a plane")
    env = stackup_environments(stackup, planes).signal.get(index)
    if env is None:
        raise click.UsageError(f"layer {copper[index].name} has no plane on either side in this stackup")
    widths, gaps = _gaps(widths, spacings)
    try:
        section = traces_on_layer(widths_mm=widths, spacings_mm=gaps, **section_arguments(env))
    except ValueError as exc:
        raise click.UsageError(str(exc)) from exc
    refs = f"{env.height_mm:.4g} mm to its reference"
    return section, f"layer {copper[index].name} of {stackup.path}: {env.structure}, {refs}"


def _copper_index(copper, text: str, option: str) -> int:
    """A copper layer of the stackup by name (any case) or by number from 1 at the top."""
    for s in copper:
        if s.name.lower() == text.lower():
            return s.copper_index
    if text.isdigit() and 1 <= int(text) <= len(copper):
        return int(text) - 1
    raise click.UsageError(f"{option} {text!r} is not a copper layer of the stackup "
                           f"({', '.join(s.name for s in copper)}, or 1-{len(copper)})")


#: where each figure is read, per victim termination (the scan's model, docs/physics.md "Terminations")
RECEIVER_ENDS = {
    "matched": ("at the victim's matched near end", "at the victim's matched far end"),
    "high-z-receiver": ("at a high-impedance receiver on the aggressor's driver end (victim driven from the far end)",
                        "at a high-impedance receiver on the far end (victim driven from the same end)"),
}


def section_data(section, aggressor: int, victim: int, rise_time_ns, length_mm, swing_v, termination) -> dict:
    """Everything the command reports, as plain data (SI unless the key says otherwise)."""
    m = solve_cross_section(section)
    n = m.count
    data = {
        "traces": n,
        "L_per_m": m.L.tolist(),
        "C_per_m": m.C.tolist(),
        "C0_per_m": m.C0.tolist(),
        "z0_ohm": [m.z0(i) for i in range(n)],
        "eps_eff": [m.eps_eff(i) for i in range(n)],
        "velocity_m_per_s": [m.velocity(i) for i in range(n)],
        "z_even_ohm": None, "z_odd_ohm": None, "kb": None, "kf_s_per_m": None,
        "saturation_length_mm": None, "next_v": None, "fext_v": None, "weak_coupling": None,
    }
    if n == 2 and np.allclose(m.C[0, 0], m.C[1, 1], rtol=1e-6):
        data.update(z_even_ohm=m.z_even, z_odd_ohm=m.z_odd)
    if n >= 2:
        kb, kf = coupling_coefficients(m, aggressor, victim)
        data.update(aggressor=aggressor, victim=victim, kb=kb, kf_s_per_m=kf,
                    weak_coupling=bool(weak_coupling_holds(kb)))
    if rise_time_ns is not None:
        rise_s = rise_time_ns * S_PER_NS
        data.update(rise_time_ns=rise_time_ns,
                    saturation_length_mm=float(saturation_length_m(m.velocity(aggressor), rise_s)) / M_PER_MM)
        if n >= 2 and length_mm is not None:
            noise = piecewise_peaks([data["kb"]], [data["kf_s_per_m"]], [length_mm * M_PER_MM],
                                    [m.velocity(aggressor)], rise_s, swing_v, termination=termination)
            data.update(length_mm=length_mm, swing_v=swing_v, termination=termination,
                        next_v=noise.next_v, fext_v=noise.fext_v)
    return data


def render_section(data: dict) -> str:
    n = data["traces"]
    lines = [data["layer"]] if data.get("layer") else []
    lines += ["L (nH/m):"] + ["  " + "  ".join(f"{v * 1e9:10.2f}" for v in row) for row in data["L_per_m"]]
    lines += ["C (pF/m):"] + ["  " + "  ".join(f"{v * 1e12:10.2f}" for v in row) for row in data["C_per_m"]]
    for i in range(n):
        lines.append(f"trace {i}: Z0 {data['z0_ohm'][i]:.2f} ohm, eps_eff {data['eps_eff'][i]:.3f}, "
                     f"v {data['velocity_m_per_s'][i] * 1e-6:.1f} mm/ns")
    if data["z_even_ohm"] is not None:
        lines.append(f"even / odd impedance: {data['z_even_ohm']:.2f} / {data['z_odd_ohm']:.2f} ohm")
    if data["kb"] is not None:
        lines.append(f"aggressor {data['aggressor']} -> victim {data['victim']}: Kb {data['kb']:.4f}, "
                     f"Kf {data['kf_s_per_m'] * 1e12:.2f} ps/m")
        if not data["weak_coupling"]:
            lines.append(f"note: Kb above {WEAK_COUPLING_LIMIT}: weak-coupling estimates lose accuracy")
    if data["saturation_length_mm"] is not None:
        lines.append(f"saturation length at {data['rise_time_ns']} ns: {data['saturation_length_mm']:.1f} mm")
    if data["next_v"] is not None:
        near, far = RECEIVER_ENDS[data["termination"]]
        lines += [f"over {data['length_mm']} mm, {data['swing_v']} V swing, victim termination {data['termination']}:",
                  f"  NEXT {data['next_v'] * 1e3:.1f} mV {near}",
                  f"  FEXT {data['fext_v'] * 1e3:.1f} mV {far}"]
    lines.append("Estimates from a lossless quasi-static model: confirm critical nets by measurement or full "
                 "simulation.")
    return "\n".join(lines)


@click.command("section")
@click.option("--width", "widths", type=Physical("trace width"), multiple=True, required=True,
              help="Trace width in mm; repeat for each trace, left to right (one width and a spacing: a pair).")
@click.option("--spacing", "spacings", type=Physical("edge spacing"), multiple=True,
              help="Edge-to-edge gap in mm between neighbouring traces; one value applies to every gap.")
@click.option("--copper", type=Physical("copper thickness", zero_allowed=True), default=0.035, show_default=True,
              help="Copper thickness in mm (0: zero-thickness strips).")
@click.option("--height-below", type=Physical("dielectric thickness"), help="Dielectric from the plane to the trace, mm.")
@click.option("--er-below", type=Physical("relative permittivity"), default=4.2, show_default=True,
              help="Relative permittivity of the dielectric below the trace.")
@click.option("--height-above", type=Physical("dielectric thickness"),
              help="Dielectric above the trace base, mm: up to the upper plane (stripline) or a cover layer.")
@click.option("--er-above", type=Physical("relative permittivity"), help="Its relative permittivity (default: --er-below).")
@click.option("--planes", type=click.Choice(["below", "both"]),
              help="Reference planes: 'below' (microstrip) or 'both' (stripline); default from --height-above.")
@click.option("--mask", type=Physical("soldermask thickness"), help="Soldermask thickness in mm over a microstrip.")
@click.option("--mask-er", type=Physical("relative permittivity"), default=3.5, show_default=True,
              help="Soldermask relative permittivity.")
@click.option("--aggressor", type=click.IntRange(min=0), default=0, show_default=True, help="Aggressor trace index.")
@click.option("--victim", type=click.IntRange(min=0), default=1, show_default=True, help="Victim trace index.")
@click.option("--rise-time", "rise_time_ns", type=Physical("rise time"), help="Aggressor 10-90 % rise time in ns.")
@click.option("--length", "length_mm", type=Physical("coupled length"), help="Coupled length in mm (needs --rise-time).")
@click.option("--swing", "swing_v", type=Physical("swing"), default=1.0, show_default=True, help="Aggressor swing in V.")
@click.option("--termination", type=click.Choice(TERMINATIONS), default=DEFAULT_CLASS.termination, show_default=True,
              help="Victim terminations, as a net class's 'termination' in the rules file: both ends matched, or a "
                   "matched driver at one end and a high-impedance receiver at the other (the worse of the two "
                   "ends is taken for each figure, as the scan does).")
@stackup_option
@click.option("--layer", help="With --stackup: the copper layer to solve (its name in the stackup, or its number "
                              "from 1 at the top).")
@click.option("--plane-layers", help="With --stackup: the copper layers that are planes, comma-separated (default: "
                                     "every copper layer but --layer, so its neighbours are its references).")
@click.option("--json", "as_json", is_flag=True, help="Print the figures as JSON.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False, writable=True),
              help="Also draw the cross-section to scale into this file (.png, .svg or .pdf).")
@click.pass_context
def command(ctx, widths, spacings, copper, height_below, er_below, height_above, er_above, planes, mask, mask_er,
            aggressor, victim, rise_time_ns, length_mm, swing_v, termination, stackup_path, layer, plane_layers, as_json,
            plot_path):
    """Solve one cross-section: L and C matrices, impedances, Kb and Kf, and NEXT/FEXT for a coupled length.

    Describe the layer by hand (--height-below and the options after it), or take it from a stackup file
    (--stackup FILE --layer NAME). --plot draws the cross-section to scale."""
    where = None
    if stackup_path is not None:
        section, where = _from_stackup(ctx, stackup_path, layer, plane_layers, widths, spacings)
    elif layer is not None or plane_layers is not None:
        raise click.UsageError("--layer and --plane-layers need --stackup")
    else:
        section = _build(widths, spacings, copper, height_below, er_below, height_above, er_above, planes, mask,
                         mask_er)
    count = len(section.conductors)
    if count > 1 and (aggressor >= count or victim >= count or aggressor == victim):
        raise click.UsageError(f"--aggressor and --victim must be two different traces among 0..{count - 1}")
    if length_mm is not None and rise_time_ns is None:
        raise click.UsageError("--length needs --rise-time")
    if plot_path is not None and Path(plot_path).suffix.lower() not in PLOT_FORMATS:
        raise click.UsageError(f"--plot: give a file name ending in {', '.join(PLOT_FORMATS)}")
    with np.errstate(all="ignore"):
        data = section_data(section, aggressor, victim, rise_time_ns, length_mm, swing_v, termination)
    check_finite(np.concatenate([np.ravel(v) for v in data.values()
                                 if isinstance(v, (int, float, list)) and not isinstance(v, bool)]),
                 "cross-section results")
    if where is not None:
        data["layer"] = where
    if plot_path is not None:
        _plot(section, data, Path(plot_path))
    click.echo(json.dumps(data, indent=2) if as_json else render_section(data))


def _plot(section, data: dict, path: Path) -> None:
    """The sketch of ``section`` with its impedance and coupling in the heading."""
    from scanner.report.figsave import save  # matplotlib loads only when a plot is asked for
    from scanner.report.sectionplot import section_figure

    count = data["traces"]
    roles = {data["aggressor"]: "aggressor", data["victim"]: "victim"} if data["kb"] is not None else {}
    labels = [f"{roles[i]} ({i})" if i in roles else f"trace {i}" for i in range(count)]
    coupling = (f", Kb {data['kb']:.4f}, Kf {data['kf_s_per_m'] * 1e12:.1f} ps/m" if data["kb"] is not None else "")
    heading = (f"Cross-section: {count} trace{'s' if count != 1 else ''}, to scale"
               + (f" ({data['layer']})" if data.get("layer") else ""))
    detail = f"Z0 {data['z0_ohm'][0]:.1f} ohm, eps_eff {data['eps_eff'][0]:.3f}{coupling}"
    save(section_figure(section, heading, detail, labels, roles), path, PLOT_DPI)
