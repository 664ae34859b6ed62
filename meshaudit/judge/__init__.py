"""Stage 3, judging: profiles of warn/fail limits, verdicts and breach levels, the score,
and the kinds and severities of the mesh-level findings."""
