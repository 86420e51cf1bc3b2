"""Figures of the source: coherence, mode combs, broadband (LED) figures, colour, the uncertainty budget."""
