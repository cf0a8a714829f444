"""Roundsman's engine: street networks, files, solvers and plans.

Pure Python; never imports Qt (``tests/test_layering.py`` enforces it).
"""

__version__ = "0.1.0"
