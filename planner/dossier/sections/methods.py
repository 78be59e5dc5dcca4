"""Methods and assumptions with their sources (section 8) and the project file as the appendix."""

from __future__ import annotations

from reportlab.platypus import PageBreak, Spacer, XPreformatted

from ..layout import FRAME_WIDTH, STYLES, Para, esc, p, table
from ..text import METHODS, REFERENCES, celsius, value_text
from .context import Context


# --- 8: methods ------------------------------------------------------------------------------------------------
def methods(ctx: Context) -> list:
    """Methods and assumptions with their published sources, and the model parameters."""
    spec = ctx.spec
    out = [ctx.heading("Methods and assumptions")]
    for title, paras in METHODS:
        out.append(p(esc(title), "h3"))
        for t in paras:
            out.append(p(t))
    if ctx.check and ctx.check.get("budget_rule"):
        out.append(p(esc("Budget rule of this build: " + ctx.check["budget_rule"] + "."), "small"))
    for n in (ctx.sizing or {}).get("notes", []) or []:
        out.append(p(esc("Sizing: " + n + "."), "small"))
    out.append(p("Model parameters", "h2"))
    m, amb, r = spec.movement, spec.ambient, spec.parts.resistors
    rows = [
        ["Movement", f"I_fs {value_text(m.i_fs_a, 'A')}, R_m {value_text(m.r_coil_ohm, 'ohm')}, "
                     f"class {m.class_index:g}, "
                     f"coil tempco {m.tempco_per_k * 1e6:g} ppm/K, R_m tolerance {100 * m.tolerance:g} %, "
                     f"I_fs tolerance {100 * m.i_fs_tolerance:g} %"],
        ["Overload", f"end stop {m.overload.peg:g} x, short time {m.overload.short_time:g} x, continuous "
                     f"{m.overload.continuous:g} x I_fs"],
        ["Ambient", f"reference {celsius(amb.t_ref_k)}, range {celsius(amb.t_min_k)} to {celsius(amb.t_max_k)}"],
        ["Resistors (default)", f"{r.series}, {100 * r.tolerance:g} %, {r.tempco_per_k * 1e6:g} ppm/K, "
                                f"{value_text(r.power_w, 'W')}, {value_text(r.max_voltage_v, 'V')}, {r.distribution}"],
    ]
    for d in spec.parts.diodes.values():
        rows.append([f"Diode model {d.name}",
                     f"I_s {value_text(d.i_s_a, 'A', 3)}, n {d.n:g}, R_s {value_text(d.r_s_ohm, 'ohm', 3)}, "
                     f"R_p {value_text(d.r_p_ohm, 'ohm', 3)}, E_g {d.eg_ev:g} eV, XTI {d.xti:g}"
                     + (f", BV {value_text(d.bv_v, 'V')}" if d.bv_v is not None else "")
                     + f"; I_F max {value_text(d.max_current_a, 'A', 3)}, "
                       f"surge {value_text(d.surge_current_a, 'A', 3)}, "
                       f"P max {value_text(d.max_power_w, 'W', 3)}"])
    for f in spec.parts.fuses.values():
        rows.append([f"Fuse model {f.name}",
                     f"rated {value_text(f.rated_current_a, 'A')}, breaking {value_text(f.breaking_capacity_a, 'A')}, "
                     f"cold {value_text(f.r_cold_ohm, 'ohm')}, voltage {value_text(f.max_voltage_v, 'V')}"
                     + (f", I2t {f.i2t_a2s:g} A2s" if f.i2t_a2s else "")])
    rows.append(["Analysis", f"Monte Carlo {ctx.samples} builds, seed {ctx.seed}; sizing share of class "
                             f"{spec.analysis.allowed_share:g}"])
    out.append(table(["Item", "Parameters"], rows, [0.22, 0.78]))
    out.append(p("Sources", "h2"))
    for i, ref in enumerate(REFERENCES, start=1):
        out.append(Para(ref, STYLES["bullet"], bulletText=f"[{i}]"))
    out.append(PageBreak())
    return out


# --- appendix ------------------------------------------------------------------------------------------------------
def appendix(ctx: Context) -> list:
    """The project file, line-numbered and wrapped, as the appendix."""
    spec = ctx.spec
    out = [ctx.heading("Appendix: project file")]
    out.append(p(esc(f"{spec.path or 'project text'} \u2013 SHA-256 {ctx.sha256 or 'n/a'}"), "small"))
    out.append(Spacer(1, 4))
    if not spec.text:
        out.append(p("The text of the project file is not available (the project was not loaded from a file)."))
        return out
    char_w = 0.6 * STYLES["mono"].fontSize
    width = int((FRAME_WIDTH - 8) / char_w)
    lines = spec.text.replace("\t", "    ").splitlines()
    digits = len(str(len(lines)))
    body = width - digits - 3
    chunk = []
    for i, line in enumerate(lines, start=1):
        pieces = [line[k:k + body] for k in range(0, len(line), body)] or [""]
        for j, piece in enumerate(pieces):
            num = f"{i:>{digits}}" if j == 0 else " " * (digits - 1) + "+"
            chunk.append(f"{num} | {piece}")
    block = 60
    for k in range(0, len(chunk), block):
        out.append(XPreformatted(esc("\n".join(chunk[k:k + block])), STYLES["mono"]))
    out.append(p("Lines longer than the column continue on the next line, marked '+'.", "caption"))
    return out
