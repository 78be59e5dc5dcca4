"""Checks of the dossier's switch wiring pages (planner.dossier.wafer): it renders the wiring, all of it."""

from __future__ import annotations

from pathlib import Path

import pytest
from reportlab.graphics.shapes import String

from planner import network as nw
from planner.design import build
from planner.dossier.wafer import FONT, wafer_drawing, wiring_flowables
from planner.project import load
from planner.wiring import wire_switch

ROOT = Path(__file__).resolve().parent.parent


def _strings(drawing) -> list[String]:
    out, stack = [], list(drawing.contents)
    while stack:
        s = stack.pop()
        if isinstance(s, String):
            out.append(s)
        stack.extend(getattr(s, "contents", []))
    return out


@pytest.mark.parametrize("style", [nw.MAKE_BEFORE_BREAK, nw.BREAK_BEFORE_MAKE])
def test_every_terminal_in_use_is_drawn_with_its_position_and_node(style):
    net = build(load(ROOT / "projects" / "worn_multimeter.yaml")).net
    w = wire_switch(net, style)
    for deck in range(1, w.decks + 1):
        texts = [s.text for s in _strings(wafer_drawing(w, deck))]
        for pole in w.deck_poles(deck):
            assert f"pole {pole.pole}: common {pole.common}" in texts
            for t in pole.contacts:
                assert f"{t.position}: {t.node}" in texts


def test_print_sizes():
    # readable when printed: no text under 6 pt (common practice for drawings)
    net = build(load(ROOT / "projects" / "bench_ammeter.yaml")).net
    w = wire_switch(net, nw.BREAK_BEFORE_MAKE)
    assert min(s.fontSize for s in _strings(wafer_drawing(w, 1))) >= 6.0 and FONT >= 6.0


def test_no_contacts_no_section():
    net = build(load(ROOT / "projects" / "pocket_voltmeter.yaml")).net
    assert wiring_flowables(None) == []
    assert len(wiring_flowables(wire_switch(net, nw.MAKE_BEFORE_BREAK))) > 2
