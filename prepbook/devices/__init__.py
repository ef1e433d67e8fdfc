"""Instruments on a wire: balances on a serial line and their simulated stand-in.

Input and output only, no database: ``profiles`` (how a balance's line is set up and
reads), ``balance`` (one mass from a balance), ``simulator`` (a balance to try the
flow without hardware). The services (``prepbook.lab.balances``) add the record.
"""
