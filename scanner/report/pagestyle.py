"""The page's style sheet (inline): readable at 1280 px and at 800 px wide, board map included."""
from __future__ import annotations

from scanner.report import palette

#: copper tints on the board map per side of the layer: our own choice, apart in hue so layers can be told apart
MAP_TINT = {"top": ("#cdc5b6", "#bfb6a5"), "inner": ("#bfc8d2", "#aeb8c4"), "bottom": ("#c6cdb3", "#b5bd9f")}


def style() -> str:
    s = palette.STATUS_COLOUR
    t = palette.STATUS_TEXT
    tints = "\n".join(
        f".layer.side-{side} .cu-trace {{ stroke: {trace}; }}\n.layer.side-{side} .cu-pad {{ fill: {pad}; }}\n"
        f"label.toggle.side-{side} {{ border-bottom: 4px solid {trace}; }}"
        for side, (trace, pad) in MAP_TINT.items())
    return f"""
body {{ font-family: system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif; color: {palette.INK};
  margin: 0 auto; max-width: 1280px; padding: 0 1.2rem 3rem; line-height: 1.4; }}
h1 {{ font-size: 1.5rem; margin: 1.2rem 0 0.5rem; }}
h2 {{ font-size: 1.2rem; margin-top: 2.2rem; border-bottom: 2px solid {palette.POUR}; padding-bottom: 0.2rem; }}
h3 {{ font-size: 1.02rem; margin: 1.4rem 0 0.4rem; }}
h4 {{ font-size: 0.92rem; margin: 0.9rem 0 0.3rem; }}
nav {{ margin: 0.6rem 0; }}
a {{ color: {palette.VICTIM}; }}
.caution {{ background: #fbf3e2; border-left: 5px solid {s['warn']}; padding: 0.6rem 0.9rem; }}
.verdict {{ border: 1px solid #e6e1d7; border-radius: 6px; padding: 0.5rem 0.9rem; background: {palette.BOARD_FILL}; }}
.verdict p {{ margin: 0.3rem 0 0.4rem; font-size: 1.02rem; }}
.verdict ul {{ margin: 0.2rem 0 0.3rem; padding-left: 1.3rem; }}
.verdict ul.refs {{ font-size: 0.85rem; color: #5b544a; }}
.verdict-word {{ display: inline-block; font-weight: 700; font-size: 1.15rem; padding: 0.05rem 0.6rem;
  border-radius: 4px; color: #fff; }}
.v-fail {{ background: {s['fail']}; }}
.v-pass {{ background: {s['pass']}; }}
.v-incomplete {{ background: {s['warn']}; color: {t['warn']}; }}
table {{ border-collapse: collapse; font-size: 0.82rem; margin: 0.5rem 0 1rem; }}
th, td {{ border-bottom: 1px solid #e6e1d7; padding: 0.25rem 0.5rem; text-align: left; vertical-align: top; }}
th {{ background: {palette.BOARD_FILL}; position: sticky; top: 0; }}
td.num, th.num {{ text-align: right; font-variant-numeric: tabular-nums; }}
tr.row-fail td:first-child {{ border-left: 4px solid {s['fail']}; }}
tr.row-warn td:first-child {{ border-left: 4px solid {s['warn']}; }}
tr.row-pass td:first-child {{ border-left: 4px solid {s['pass']}; }}
tr[data-run] {{ cursor: pointer; }}
tr[data-run]:hover td {{ background: #f7f2e6; }}
tr.picked td {{ background: #fdf0c8; }}
.badge {{ display: inline-block; border-radius: 0.6rem; padding: 0 0.5rem; font-weight: 600; font-size: 0.78rem; }}
.st-fail {{ background: {s['fail']}; color: {t['fail']}; }}
.st-warn {{ background: {s['warn']}; color: {t['warn']}; }}
.st-pass {{ background: {s['pass']}; color: {t['pass']}; }}
dl.facts {{ display: grid; grid-template-columns: max-content auto; gap: 0.15rem 1rem; font-size: 0.88rem; }}
dl.facts dt {{ color: #6b6357; }}
dl.facts dd {{ margin: 0; }}
figure {{ margin: 0.8rem 0 1.4rem; }}
figure img {{ max-width: 100%; height: auto; border: 1px solid #e6e1d7; }}
figcaption {{ font-size: 0.82rem; color: #6b6357; }}
.pair {{ display: flex; flex-wrap: wrap; gap: 1rem; }}
.pair figure {{ flex: 1 1 540px; margin: 0.4rem 0; }}
.scroll {{ overflow-x: auto; }}
.muted {{ color: #6b6357; font-size: 0.85rem; }}
.sub {{ color: #6b6357; font-size: 0.74rem; }}
td.num {{ white-space: nowrap; }}
table.findings td, table.findings-pass td {{ font-size: 0.8rem; }}
table.fix-first td:nth-child(5) {{ min-width: 16rem; }}
figure img.map {{ max-width: min(100%, 1100px); }}
figure img.bars, figure img.stackup {{ max-width: min(100%, 760px); }}
details {{ margin: 0.6rem 0; }}
summary {{ cursor: pointer; font-weight: 600; }}
#board-map {{ border: 1px solid #e6e1d7; border-radius: 6px; padding: 0.4rem; margin: 0.6rem 0 1rem; }}
.map-controls {{ display: flex; flex-wrap: wrap; gap: 0.3rem 0.9rem; align-items: center; font-size: 0.85rem;
  margin-bottom: 0.3rem; }}
.map-controls .buttons {{ margin-left: auto; display: flex; gap: 0.3rem; }}
.map-controls button {{ font: inherit; padding: 0.1rem 0.6rem; border: 1px solid #cfc7b8; background: #fff;
  border-radius: 4px; cursor: pointer; }}
label.toggle {{ cursor: pointer; padding-bottom: 1px; }}
.map-body {{ display: grid; grid-template-columns: minmax(0, 1fr) 19rem; gap: 0.6rem; }}
.map-frame {{ min-width: 0; }}
#map-svg {{ width: 100%; height: min(68vh, 620px); display: block; background: {palette.BACKGROUND};
  touch-action: none; cursor: grab; --u: 0.1; }}
#map-svg:focus {{ outline: 2px solid {palette.VICTIM}; }}
#map-info {{ font-size: 0.84rem; overflow-y: auto; max-height: min(68vh, 620px); }}
#map-info h4 {{ margin: 0.6rem 0 0.2rem; }}
#map-info p {{ margin: 0.1rem 0; }}
#map-info ul {{ margin: 0.1rem 0 0.3rem; padding-left: 1.1rem; }}
.map-fix-head {{ font-weight: 600; }}
.outline {{ fill: {palette.BOARD_FILL}; fill-rule: evenodd; stroke: {palette.BOARD_EDGE};
  stroke-width: calc(1.2px * var(--u)); }}
.outline.extent {{ fill: none; stroke-dasharray: calc(5px * var(--u)) calc(4px * var(--u)); }}
.cu-trace {{ fill: none; stroke-linecap: round; stroke-linejoin: round; }}
.cu-pad {{ fill-rule: evenodd; }}
.cu-pour {{ fill: {palette.POUR}; fill-rule: evenodd; opacity: 0.7; }}
{tints}
.run-victim, .run-aggressor {{ fill: none; stroke-linecap: round; stroke-linejoin: round;
  stroke-width: max(var(--w), calc(2.4px * var(--u))); }}
.run-victim {{ stroke: {palette.VICTIM}; }}
.run-aggressor {{ stroke: {palette.AGGRESSOR}; }}
.run-victim.sel, .run-aggressor.sel {{ stroke-width: max(var(--w), calc(5px * var(--u))); }}
.mark {{ cursor: pointer; }}
.mark .shape {{ fill: #fff; stroke-width: 2.2px; }}
.mark text {{ font-size: 11px; font-weight: 700; paint-order: stroke; stroke: #fff; stroke-width: 3px;
  text-anchor: middle; dominant-baseline: central; }}
.mark .leader {{ stroke: {palette.LEADER}; stroke-width: 0.8px; }}
.mark.st-fail .shape {{ stroke: {s['fail']}; }}
.mark.st-fail text {{ fill: {s['fail']}; }}
.mark.st-warn .shape {{ stroke: {s['warn']}; }}
.mark.st-warn text {{ fill: #a86a00; }}
.mark.st-pass .shape {{ stroke: {s['pass']}; }}
.mark.st-pass text {{ fill: {s['pass']}; }}
.mark.quiet, .mark.off, .run-victim.quiet, .run-aggressor.quiet {{ display: none; }}
.mark.quiet.sel, .run-victim.quiet.sel, .run-aggressor.quiet.sel {{ display: inline; }}
.mark.sel .shape {{ fill: #ffe27a; stroke-width: 3.5px; }}
.mark.sel text {{ font-size: 13px; }}
@media (max-width: 900px) {{
  body {{ padding: 0 0.6rem 2rem; }}
  .map-body {{ grid-template-columns: minmax(0, 1fr); }}
  #map-svg {{ height: min(60vh, 480px); }}
  #map-info {{ max-height: none; }}
  .pair figure {{ flex-basis: 100%; }}
  table.fix-first td:nth-child(5) {{ min-width: 12rem; }}
}}
"""
