"""Roundsman's window (PySide6).  Calls :mod:`core`; ``core`` never calls it."""
