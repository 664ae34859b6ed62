"""What an audit gives back: the report and its statistics, the comparison of two
audits, the explanation of one element and the mesh kept for pictures."""
