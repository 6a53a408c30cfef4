"""Axisymmetric time-harmonic finite-element reference (scikit-fem) and its own uncertainty."""
