"""Headroom rules."""
