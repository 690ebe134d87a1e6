"""Foundations every layer may use: units and angles (``units``), the exit statuses (``exitcodes``) and
where the shipped specs and templates are (``resources``).

Layer 0 with :mod:`labcheck.reductions`: imports nothing of labcheck's above it.
"""
