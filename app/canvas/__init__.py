"""The drawing canvas: a QGraphicsScene in metres, its view and editing tools.

Conventions the rest of the window relies on (kept stable):

- **Coordinates.**  Scene coordinates are metres of the network's projected
  CRS with ``y`` flipped: the network point ``(x, y)`` is the scene point
  ``(x, -y)``.  Convert only with :func:`app.canvas.coords.to_scene` and
  :func:`app.canvas.coords.from_scene`.
- **The data.**  The scene never owns the network.  It observes
  :class:`app.document.NetworkDocument` (``changed(segment_ids, node_ids)``,
  ``reset()``, ``depotChanged``, ``selectionChanged(list_of_segment_ids)``) and
  changes it only through ``document.apply_edit(core.edit.Edit)``, which goes
  on the undo stack.
- **Stacking (z values).**  backdrop: drawn by the view, no items; streets 0;
  one-way arrowheads 1; junction markers 2; depot 3; rubber band / tool
  feedback 50.  The planning overlay (app/plan) uses z 10–40, so it lies over
  the streets and under tool feedback.
- **Item lookup.**  ``StreetScene.street_item(segment_id)`` gives the street's
  QGraphicsPathItem; ``StreetScene.streets_near(point, tolerance)`` and
  ``StreetScene.node_near(point, tolerance)`` do hit testing in scene units.
- **Pixels.**  Pens are cosmetic (widths in screen pixels).  ``CanvasView.pixel_size()``
  gives the scene metres per screen pixel at the current zoom.
"""
