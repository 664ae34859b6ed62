"""Benchmarks of meshaudit: synthetic meshes and a timing table (``python -m benchmarks.run``)."""
