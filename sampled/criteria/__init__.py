"""Stability criteria: each takes a polynomial and returns a table and root counts."""
