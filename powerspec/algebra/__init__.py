"""Stage 3 -- product algebra.

Expression tree, grammar, product-kind tables, powers, extremes and moments.
"""
