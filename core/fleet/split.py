"""Route-first, cluster-second: the optimal split of a giant tour into trips.

The giant tour is one sequence of service passes (the engine's single circuit,
:func:`core.solve.circuit.plan_circuit`, or a nearest-neighbour order when the
circuit cannot be had).  :func:`split_tour` cuts it into trips that respect the
capacity and the time limit at least total cost: a shortest path in the acyclic
auxiliary graph whose arc (i, j) is the trip serving passes i..j-1 (Ulusoy 1985,
"The fleet size and mix problem for capacitated arc routing", EJOR 22; Beasley
1983 for node routing).  Cost O(n²) in the worst case, O(n·k) when at most k
passes fit in one load.  Pass directions stay as in the tour (Ulusoy also lets a
trip flip them; left out for speed, the improvement search does it).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence

from core.fleet.graph import StateGraph, Task

Visit = tuple[int, int]
"""(task index, the arc it is serviced along)."""


def trip_cost_fn(
    graph: StateGraph, start: int, end_of: Callable[[int], tuple[float, float]]
) -> Callable[[Sequence[Visit], Sequence[Task]], tuple[float, float]]:
    """A function giving (length, minutes) of one trip from ``start`` through the
    visits to the end (``end_of(arc)`` gives the length and minutes to finish)."""

    def cost(visits: Sequence[Visit], tasks: Sequence[Task]) -> tuple[float, float]:
        length, minutes, here = 0.0, 0.0, start
        for ti, arc in visits:
            length += graph.dist(here, arc)
            minutes += path_minutes(graph, here, arc) + tasks[ti].service_min
            here = arc
        e_len, e_min = end_of(here)
        return length + e_len, minutes + e_min

    return cost


def path_minutes(graph: StateGraph, source: int, arc: int) -> float:
    """Deadhead minutes from ``source`` to the start of servicing ``arc``.  O(path)."""
    return graph.minutes(source, arc) - float(graph.arc_min[arc])


def split_tour(
    tour: Sequence[Visit],
    tasks: Sequence[Task],
    graph: StateGraph,
    start: int,
    end_of: Callable[[int], tuple[float, float]],
    capacity: float | None,
    max_min: float | None,
) -> list[list[Visit]]:
    """Cut ``tour`` into trips at least total length (Ulusoy 1985 split).

    ``start`` is the state trips leave from; ``end_of(arc)`` the (length, minutes)
    from the last serviced arc to the trip's end.  A pass heavier than the capacity
    or longer than the time limit still gets a trip of its own (the checker then
    reports it).  O(n·k) where k passes fit in one trip.
    """
    n = len(tour)
    best = [math.inf] * (n + 1)
    back = [0] * (n + 1)
    best[0] = 0.0
    for i in range(n):
        if not math.isfinite(best[i]):
            continue
        load = length = minutes = 0.0
        here = start
        for j in range(i, n):
            ti, arc = tour[j]
            t = tasks[ti]
            load += t.demand
            length += graph.dist(here, arc)
            if max_min is not None:
                minutes += path_minutes(graph, here, arc) + t.service_min
            here = arc
            e_len, e_min = end_of(arc)
            over_cap = capacity is not None and load > capacity * (1 + 1e-9)
            over_time = max_min is not None and minutes + e_min > max_min * (1 + 1e-9)
            if (over_cap or over_time) and j > i:
                break
            c = best[i] + length + e_len
            if c < best[j + 1]:
                best[j + 1] = c
                back[j + 1] = i
            if over_cap or over_time:
                break
    trips: list[list[Visit]] = []
    j = n
    while j > 0:
        i = back[j]
        trips.append(list(tour[i:j]))
        j = i
    trips.reverse()
    return trips
