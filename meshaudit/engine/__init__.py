"""The engine: runs the stages over a mesh chunk by chunk (``run.audit_elements``), each
chunk measured and judged by a pure function (``measure.measure_chunk``), on a pool of
threads (``pool``), into per-element result arrays (``sink``)."""
