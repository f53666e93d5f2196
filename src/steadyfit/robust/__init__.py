"""Robustness at speed: many fits of one design at once (``kernel``), and the analyses
built on it."""
