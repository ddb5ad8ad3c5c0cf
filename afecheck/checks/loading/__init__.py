"""Loading rules."""
