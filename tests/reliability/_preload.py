"""Imported once by the forkserver before it forks bench processes: loads and checks
the built-in catalog, so each child starts with it in memory."""

from prepbook.catalog import loader

loader.catalog()
