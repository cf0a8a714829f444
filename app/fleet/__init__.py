"""Fleet plans in the window: routes for several vehicles, loads and limits.

- :mod:`app.fleet.choices` — the Vehicles settings as plain data, their checks and
  defaults (the file's figures, else the activity's capacity); no Qt;
- :mod:`app.fleet.figures` — the plan's figures as words and table cells; no Qt;
- :mod:`app.fleet.runner` — :class:`FleetRunner`, :func:`core.fleet.plan_fleet` on a
  QThread with progress and cancel;
- the route and trip tables are :class:`app.cell_table.CellTableModel`s;
- :mod:`app.fleet.panel` — the "Routes" panel with its Vehicles settings;
- :mod:`app.fleet.controller` — holds the fleet plan, observes the document, shows a
  route through the circuit overlay, prints and saves the route cards
  (:func:`install_fleet`).
"""

from app.fleet.controller import FleetController, install_fleet

__all__ = ["FleetController", "install_fleet"]
