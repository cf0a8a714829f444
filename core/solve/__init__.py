"""Route solvers: from a street network to a plan.

``plan_circuit`` is the entry point; the modules below it are the methods it
chooses between (see :mod:`core.solve.circuit`).
"""

from core.solve.circuit import plan_circuit, walk

__all__ = ["plan_circuit", "walk"]
