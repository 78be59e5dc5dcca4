"""The ``faults:`` section (sources, maximum input, category, accepted cases) and ``analysis:``.

Fault sources have unique names and exactly one of a voltage or a current; an
accepted case names positions and stimuli (one or a list) and says why; the
measurement category follows IEC 61010-1 (CAT II, III, IV up to 1000 V).
``analysis:`` holds the Monte Carlo builds, the seed and the share of the class
the errors may take.
"""

from __future__ import annotations

import re

from .. import model, units, values
from ..units import QuantityError
from .limits import MAX_SAMPLES, MAX_SEED, MAX_SOURCES
from .reader import Reader, Section, capped, distinct_name
from .tree import Node

__all__ = ["FAULTS_KEYS", "SOURCE_KEYS", "ACCEPT_KEYS", "ANALYSIS_KEYS", "read_faults", "read_analysis"]

FAULTS_KEYS = ("sources", "max_input", "category", "accept")
SOURCE_KEYS = ("name", "voltage", "current", "waveform", "impedance", "current_limit", "compliance", "frequency")
ACCEPT_KEYS = ("position", "stimulus", "reason")
ANALYSIS_KEYS = ("samples", "seed", "allowed_share", "trim")


def _source_extras(ctx: Reader, s, where: str, kind: str, waveform: str):
    """A fault source's ``compliance`` (current sources only) and ``frequency`` (sines only)."""
    comp = s.qty("compliance", "voltage", None, check="pos")
    if comp is not None and kind != "current":
        ctx.fail(f"{where}: 'compliance' bounds a current source's voltage; a voltage source takes "
                 "'impedance' and 'current_limit' instead", s.get("compliance").line)
    freq = s.qty("frequency", "frequency", None, check="pos")
    if freq is not None and waveform == "dc":
        ctx.fail(f"{where}: 'frequency' applies to a sine; drop it or write 'waveform: sine'", s.get("frequency").line)
    return comp, freq


def read_faults(ctx: Reader, node: Node | None) -> model.Faults:
    if node is None:
        return model.Faults()
    m = ctx.mapping(node, "faults", FAULTS_KEYS, "{sources: [...], max_input: 600 V}")
    sources: list[model.FaultSource] = []
    keys: dict[str, tuple[str, int]] = {}
    sn = m.get("sources")
    if sn is not None:
        for i, item in enumerate(
            capped(ctx, ctx.seq(sn, "faults.sources", "[{name: wall outlet, voltage: 230 V, waveform: sine}]"),
                    MAX_SOURCES, "faults.sources", "sources", sn.line), 1
        ):
            where = f"faults.sources[{i}]"
            s = ctx.mapping(item, where, SOURCE_KEYS, "{name: wall outlet, voltage: 230 V, waveform: sine}")
            name = s.text("name", example="wall outlet")
            where = f"fault source '{name}'"
            distinct_name(ctx, name, s.line, keys, "fault source", each="source")
            if s.has("voltage") == s.has("current"):
                ctx.fail(f"{where} needs exactly one of 'voltage: 230 V' or 'current: 10 A'", s.line)
            kind = "voltage" if s.has("voltage") else "current"
            value = ctx.qty(s.get(kind), kind, f"{where}.{kind}", "nonzero")
            waveform = s.choice("waveform", ("dc", "sine"), "dc")
            try:
                values.sine_rms(value, waveform, where)
            except QuantityError as e:
                ctx.fail(e.message, s.get(kind).line)
            r_src = s.qty("impedance", "resistance", 0.0, check="nonneg")
            i_lim = s.qty("current_limit", "current", None, check="pos")
            comp, freq = _source_extras(ctx, s, where, kind, waveform)
            sources.append(
                model.FaultSource(
                    name=name,
                    kind=kind,
                    value=value,
                    waveform=waveform,
                    r_source_ohm=r_src,
                    current_limit_a=i_lim,
                    line=s.line,
                    compliance_v=comp,
                    frequency_hz=freq,
                )
            )
    max_in = m.qty("max_input", "voltage", None, check="pos")
    category = None
    cn = m.get("category")
    if cn is not None:
        category = _category(ctx, cn)
    accept: list[model.Acceptance] = []
    an = m.get("accept")
    if an is not None:
        ex = "{position: 2.5 V, stimulus: wall outlet, reason: fused in the test lead}"
        for i, item in enumerate(ctx.seq(an, "faults.accept", f"[{ex}]"), 1):
            where = f"faults.accept[{i}]"
            a = ctx.mapping(item, where, ACCEPT_KEYS, ex)
            positions, many_p = _accept_names(ctx, a, "position", "'2.5 V'")
            stimuli, many_s = _accept_names(ctx, a, "stimulus", "wall outlet")
            if not a.has("reason"):
                ctx.fail(
                    f"{where} has no reason; say why this case is acceptable, e.g. reason: fused in the test lead",
                    a.line,
                )
            reason = a.text("reason", example="fused in the test lead")
            for pos in positions:
                for stim in stimuli:
                    accept.append(
                        model.Acceptance(
                            position=pos, stimulus=stim, reason=reason, line=a.line, expanded=many_p or many_s
                        )
                    )
    return model.Faults(sources=tuple(sources), max_input_v=max_in, category=category, accept=tuple(accept))


def _accept_names(ctx: Reader, a: "Section", key: str, example: str) -> tuple[list[str], bool]:
    """One name, or a list of names, of an accept entry; True when it was a list."""
    n = a.req(key, example)
    if n.kind != "seq":
        return [ctx.text(n, a.at(key), example)], False
    items = ctx.seq(n, a.at(key), f"[{example}]")
    if not items:
        ctx.fail(f"{a.at(key)} is an empty list; give a name or a list of names, e.g. [{example}]", n.line)
    names: list[str] = []
    for i, item in enumerate(items, 1):
        name = ctx.text(item, f"{a.at(key)}[{i}]", example)
        if name not in names:
            names.append(name)
    return names, True


def _category(ctx: Reader, node: Node) -> str:
    s = " ".join(ctx.text(node, "faults.category", "'CAT II 300 V'").split())
    mt = re.fullmatch(r"(?i)CAT\s*(II|III|IV)\s+(.+)", s)
    if mt is None:
        ctx.fail(
            f"faults.category is '{s}'; write the measurement category and its voltage, e.g. 'CAT II 300 V' "
            "(CAT II, CAT III or CAT IV)",
            node.line,
        )
    try:
        v = units.parse(mt.group(2), "voltage", where="faults.category")
    except QuantityError as e:
        ctx.fail(e.message, node.line)
    if not v > 0:
        ctx.fail(f"faults.category voltage '{mt.group(2)}' must be above zero, e.g. 'CAT II 300 V'", node.line)
    if v > 1000.0 * (1 + 1e-12):  # the impulse table of planner.faults ends at 1000 V
        ctx.fail(
            f"faults.category '{s}': measurement categories cover mains up to 1000 V line to neutral; "
            "give 150 V, 300 V, 600 V or 1000 V",
            node.line,
        )
    return f"CAT {mt.group(1).upper()} {mt.group(2)}"


def read_analysis(ctx: Reader, node: Node | None) -> model.Analysis:
    d = model.Analysis()
    if node is None:
        return d
    m = ctx.mapping(node, "analysis", ANALYSIS_KEYS, "{samples: 2000, seed: 1}")
    samples = m.integer("samples", d.samples, 2, MAX_SAMPLES, "2000")
    seed = m.integer("seed", d.seed, 0, MAX_SEED, "1")
    share = m.qty("allowed_share", "fraction", d.allowed_share, check="pos")
    if share > 1:
        ctx.fail(
            f"analysis.allowed_share is {share:g}; it is a share of the class, at most 1 (100 %)",
            m.get("allowed_share").line,
        )
    return model.Analysis(samples=samples, seed=seed, allowed_share=share, trim=m.boolean("trim", False))
