"""Distortion rules."""
