"""Scalar domains and exact counts: certified balls, high-precision numbers, big exact counts."""
