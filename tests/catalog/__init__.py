"""Tests of the built-in catalog (data files and loader)."""
