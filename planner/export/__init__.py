"""Outputs for other tools: SPICE decks (``planner netlist``).

Render only: nothing here solves. :mod:`.netlist` writes one switch state with
one stimulus as a SPICE deck, each element written by its own part kind
(:meth:`planner.parts.Part.spice`).
"""

from .netlist import Deck, DeckStimulus, spice_deck, stimulus_for

__all__ = ["Deck", "DeckStimulus", "spice_deck", "stimulus_for"]
