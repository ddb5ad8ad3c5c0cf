"""Tooling used by the tests and the benchmark (design generators); not part of the installed package."""
