"""Mesh-level checks, each a pure function over the element arrays and the edge table.

All of them work by sorting or hashing whole arrays; none loops over elements or nodes.
:mod:`meshaudit.mesh_checks.findings` runs them and turns their results into findings.
"""
