"""Measuring kernels and reference data of volume elements, one module per family."""
