"""Stage 5 -- queries and planner: pick the cheapest tier that meets the size limit and accuracy."""
