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
from scanner.units import M_PER_MM, S_PER_NS

_POSITIVE = click.FloatRange(min=0, min_open=True)
PLOT_FORMATS = (".png", ".svg", ".pdf")
PLOT_DPI = 150


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


def section_data(section, aggressor: int, victim: int, rise_time_ns, length_mm, swing_v, receiver) -> dict:
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
                                    [m.velocity(aggressor)], rise_s, swing_v, far_end_receiver=receiver)
            data.update(length_mm=length_mm, swing_v=swing_v, far_end_receiver=receiver,
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
        lines.append(f"over {data['length_mm']} mm, {data['swing_v']} V swing, {data['far_end_receiver']} receiver: "
                     f"NEXT {data['next_v'] * 1e3:.1f} mV, FEXT {data['fext_v'] * 1e3:.1f} mV")
    lines.append("Estimates from a lossless quasi-static model: confirm critical nets by measurement or full "
                 "simulation.")
    return "\n".join(lines)


@click.command("section")
@click.option("--width", "widths", type=_POSITIVE, multiple=True, required=True,
              help="Trace width in mm; repeat for each trace, left to right (one width and a spacing: a pair).")
@click.option("--spacing", "spacings", type=_POSITIVE, multiple=True,
              help="Edge-to-edge gap in mm between neighbouring traces; one value applies to every gap.")
@click.option("--copper", type=click.FloatRange(min=0), default=0.035, show_default=True,
              help="Copper thickness in mm (0: zero-thickness strips).")
@click.option("--height-below", type=_POSITIVE, help="Dielectric from the plane to the trace, mm.")
@click.option("--er-below", type=click.FloatRange(min=1), default=4.2, show_default=True,
              help="Relative permittivity of the dielectric below the trace.")
@click.option("--height-above", type=_POSITIVE,
              help="Dielectric above the trace base, mm: up to the upper plane (stripline) or a cover layer.")
@click.option("--er-above", type=click.FloatRange(min=1), help="Its relative permittivity (default: --er-below).")
@click.option("--planes", type=click.Choice(["below", "both"]),
              help="Reference planes: 'below' (microstrip) or 'both' (stripline); default from --height-above.")
@click.option("--mask", type=_POSITIVE, help="Soldermask thickness in mm over a microstrip.")
@click.option("--mask-er", type=click.FloatRange(min=1), default=3.5, show_default=True,
              help="Soldermask relative permittivity.")
@click.option("--aggressor", type=click.IntRange(min=0), default=0, show_default=True, help="Aggressor trace index.")
@click.option("--victim", type=click.IntRange(min=0), default=1, show_default=True, help="Victim trace index.")
@click.option("--rise-time", "rise_time_ns", type=_POSITIVE, help="Aggressor 10-90 % rise time in ns.")
@click.option("--length", "length_mm", type=_POSITIVE, help="Coupled length in mm (needs --rise-time).")
@click.option("--swing", "swing_v", type=_POSITIVE, default=1.0, show_default=True, help="Aggressor swing in V.")
@click.option("--receiver", type=click.Choice(["matched", "high_z"]), default="matched", show_default=True,
              help="Victim far-end termination.")
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
            aggressor, victim, rise_time_ns, length_mm, swing_v, receiver, stackup_path, layer, plane_layers, as_json,
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
    data = section_data(section, aggressor, victim, rise_time_ns, length_mm, swing_v, receiver)
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
