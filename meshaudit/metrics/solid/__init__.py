"""Measuring kernels and reference data of solid (volume) elements."""
