"""Lumped thermal network of the magnet and its part: conductances, convection, coupling, limits."""
