"""Electrical figures: current phasors, harmonics, per-line loads and currents, transformers."""
