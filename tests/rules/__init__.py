"""Tests of the lab-policy rules (acceptance checks, batch life)."""
