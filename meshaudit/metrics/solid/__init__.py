"""Measuring kernels and reference data of volume (solid) elements."""
