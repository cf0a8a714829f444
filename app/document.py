"""The open drawing: the network, its undo stack, its file and its plan.

:class:`NetworkDocument` is the one owner of the :class:`core.model.Network`
the window shows.  Widgets never hold the network; they read
``document.network`` and listen to the signals:

``changed(segment_ids: set, node_ids: set)``
    Streets or junctions were added, changed or removed (an id that is no
    longer in the network was removed).
``reset()``
    The whole network was replaced (new, open, import, recovery).
``depotChanged(object)``
    The depot's junction id (``str``) or ``None``.
``selectionChanged(list)``
    The selected street ids.
``nodeSelectionChanged(list)``
    The selected junction ids.
``planChanged(object)``
    The current :class:`core.plan.Plan` or ``None``.  Any edit of the
    network sets the plan to ``None``: the circuit no longer fits it.
``pathChanged(object)``, ``dirtyChanged(bool)``
    The file name and the unsaved-changes flag, for the title bar.

All changes go through :meth:`NetworkDocument.apply_edit`, which pushes an
:class:`EditCommand` on the undo stack.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QUndoCommand, QUndoStack

from core.edit import Edit
from core.model import Network
from core.plan import Plan


class EditCommand(QUndoCommand):
    """A :class:`core.edit.Edit` on the undo stack (redo applies it, undo reverts it)."""

    def __init__(self, document: NetworkDocument, edit: Edit) -> None:
        super().__init__(edit.label)
        self.document = document
        self.edit = edit

    def redo(self) -> None:
        self.edit.apply(self.document.network)
        self.document._edited(self.edit)

    def undo(self) -> None:
        self.edit.revert(self.document.network)
        self.document._edited(self.edit)


class NetworkDocument(QObject):
    """The network being edited, with undo, file name and plan."""

    changed = Signal(object, object)
    reset = Signal()
    depotChanged = Signal(object)
    selectionChanged = Signal(list)
    nodeSelectionChanged = Signal(list)
    planChanged = Signal(object)
    pathChanged = Signal(object)
    dirtyChanged = Signal(bool)

    def __init__(self, network: Network | None = None, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.network: Network = network if network is not None else Network("Untitled")
        self.undo_stack = QUndoStack(self)
        self.path: Path | None = None
        self.plan: Plan | None = None
        self.selection: list[str] = []
        self.node_selection: list[str] = []
        self._unsaved_load = False
        self.undo_stack.cleanChanged.connect(self._clean_changed)

    def _clean_changed(self, _clean: bool) -> None:
        self.dirtyChanged.emit(self.dirty)

    # -- state ----------------------------------------------------------------
    @property
    def depot(self) -> str | None:
        return self.network.depot

    @property
    def dirty(self) -> bool:
        """True when there are changes not saved to :attr:`path`."""
        return self._unsaved_load or not self.undo_stack.isClean()

    @property
    def title(self) -> str:
        name = self.path.name if self.path else (self.network.name or "Untitled")
        return name

    # -- whole-network changes ------------------------------------------------
    def load(
        self, network: Network, path: Path | str | None = None, *, dirty: bool = False
    ) -> None:
        """Replace the network (new, open, import, recovery); clears undo,
        selection and plan.  ``dirty`` marks a network not yet saved anywhere
        (an import or a recovered drawing)."""
        self.network = network
        self.undo_stack.clear()
        self.undo_stack.setClean()
        self.selection = []
        self.node_selection = []
        self.plan = None
        self.path = Path(path) if path is not None else None
        self._unsaved_load = dirty
        self.reset.emit()
        self.selectionChanged.emit([])
        self.nodeSelectionChanged.emit([])
        self.planChanged.emit(None)
        self.depotChanged.emit(self.network.depot)
        self.pathChanged.emit(self.path)
        self.dirtyChanged.emit(self.dirty)

    def mark_saved(self, path: Path | str) -> None:
        """Record that the network was saved to ``path``."""
        self.path = Path(path)
        self._unsaved_load = False
        self.undo_stack.setClean()
        self.pathChanged.emit(self.path)
        self.dirtyChanged.emit(self.dirty)

    # -- edits ----------------------------------------------------------------
    def apply_edit(self, edit: Edit) -> bool:
        """Apply ``edit`` through the undo stack.  Empty edits are skipped.
        Returns whether anything was pushed."""
        if edit.is_empty:
            return False
        self.undo_stack.push(EditCommand(self, edit))
        return True

    def _edited(self, edit: Edit) -> None:
        """Tell the views what an applied or reverted edit touched."""
        segs = set(edit.segments)
        nodes = set(edit.nodes)
        self.changed.emit(segs, nodes)
        if edit.depot is not None:
            self.depotChanged.emit(self.network.depot)
        self._prune_selection()
        self.set_plan(None)

    def _prune_selection(self) -> None:
        kept = [s for s in self.selection if s in self.network.segments]
        if kept != self.selection:
            self.set_selection(kept)
        kept_nodes = [n for n in self.node_selection if n in self.network.nodes]
        if kept_nodes != self.node_selection:
            self.set_node_selection(kept_nodes)

    # -- selection and plan -----------------------------------------------------
    def set_selection(self, segment_ids: list[str]) -> None:
        ids = [s for s in dict.fromkeys(segment_ids) if s in self.network.segments]
        if ids != self.selection:
            self.selection = ids
            self.selectionChanged.emit(list(ids))

    def set_node_selection(self, node_ids: list[str]) -> None:
        ids = [n for n in dict.fromkeys(node_ids) if n in self.network.nodes]
        if ids != self.node_selection:
            self.node_selection = ids
            self.nodeSelectionChanged.emit(list(ids))

    def set_plan(self, plan: Plan | None) -> None:
        """Show ``plan`` (or none).  Called by the planning part when a run ends."""
        if plan is self.plan:
            return
        self.plan = plan
        self.planChanged.emit(plan)
