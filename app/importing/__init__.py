"""Importing street data in the window (issue 6): options, report, district boundary.

- :mod:`app.importing.options` — layer (GeoPackage) and road classes (OSM), broken features;
- :mod:`app.importing.report` — the import report with "keep the largest piece" and
  "show the other pieces";
- :mod:`app.importing.boundary_tool` — the District boundary canvas tool;
- :mod:`app.importing.style` — the boundary's look and z values (43–44);
- :mod:`app.importing.controller` — links them to the document and the main window
  (:func:`install_importing`), with clipping as one undoable edit.
"""

from app.importing.controller import ImportingController, install_importing

__all__ = ["ImportingController", "install_importing"]
