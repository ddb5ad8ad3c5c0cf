"""Stability rules."""
