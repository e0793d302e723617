"""Absorption-edge analysis: Tauc and Urbach formulas, window search, edge models, verdict."""
