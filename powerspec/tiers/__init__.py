"""Stage 4 -- tiers.

Each tier answers a query with rigorous bounds: exact, symmetry, explicit,
bracket, law, moment bounds.
"""
