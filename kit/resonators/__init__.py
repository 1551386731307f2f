"""Resonator stage: the peak reader, characteristic frequencies, coupling, Q, models and fits."""
