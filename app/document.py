"""The open document: the current scheme, its undo stack, its file and the selection.

The :class:`Document` is the only writer of the scheme.  Every edit is a :class:`Change`
(ids with before/after values of the nodes, members and supports it touches) pushed as one
:class:`EditCommand` on the ``QUndoStack``; a drag pushes one command per mouse move and the
commands of one gesture merge, so a drag is one undo step.  Listeners get ``changed(change)``
with the ids touched (``None`` after the whole scheme was replaced).

The document imports neither the canvas nor the panels.
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Mapping

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QUndoCommand, QUndoStack

from kinestat.core.model import Member, Node, Scheme, Support

from .qt_compat import keep_none_alive

keep_none_alive()

_GESTURES = itertools.count(1)


def new_gesture() -> int:
    """A fresh gesture number: commands carrying the same number merge into one undo step."""
    return next(_GESTURES)


@dataclass(frozen=True)
class Change:
    """Before/after values of the items an edit touches (``None`` = absent)."""

    nodes: Mapping[str, tuple[Node | None, Node | None]] = field(default_factory=dict)
    members: Mapping[str, tuple[Member | None, Member | None]] = field(default_factory=dict)
    supports: Mapping[str, tuple[Support | None, Support | None]] = field(default_factory=dict)
    #: (title, units) before and after, or None
    meta: tuple[tuple[str, str], tuple[str, str]] | None = None
    #: the scheme's verbatim top-level blocks before and after, or None (dropping "expected"
    #: alone is not an edit on its own; a changed underlay or source block is)
    extra: tuple[Mapping, Mapping] | None = None

    def is_empty(self) -> bool:
        return not (self.nodes or self.members or self.supports or self.meta or self.blocks_edited())

    def blocks_edited(self) -> bool:
        """True when a top-level block other than "expected" differs (underlay, source ...)."""
        if not self.extra:
            return False
        a, b = self.extra
        return any(a.get(k) != b.get(k) for k in set(a) | set(b) if k != "expected")

    def inverted(self) -> "Change":
        flip = lambda d: {k: (b, a) for k, (a, b) in d.items()}  # noqa: E731
        meta = (self.meta[1], self.meta[0]) if self.meta else None
        extra = (self.extra[1], self.extra[0]) if self.extra else None
        return Change(flip(self.nodes), flip(self.members), flip(self.supports), meta, extra)

    def then(self, later: "Change") -> "Change":
        """This change followed by ``later``, as one change."""
        def comp(a, b):
            out = dict(a)
            for k, (before, after) in b.items():
                out[k] = (out[k][0], after) if k in out else (before, after)
            return {k: v for k, v in out.items() if v[0] != v[1]}
        meta = None
        if self.meta or later.meta:
            first = (self.meta or later.meta)[0]
            last = (later.meta or self.meta)[1]
            meta = (first, last) if first != last else None
        extra = None
        if self.extra or later.extra:
            extra = ((self.extra or later.extra)[0], (later.extra or self.extra)[1])
        return Change(comp(self.nodes, later.nodes), comp(self.members, later.members),
                      comp(self.supports, later.supports), meta, extra)

    def apply(self, scheme: Scheme) -> Scheme:
        """The scheme with every "after" value in place."""
        def upd(d, ch):
            if not ch:
                return d
            out = dict(d)
            for k, (_, after) in ch.items():
                if after is None:
                    out.pop(k, None)
                else:
                    out[k] = after
            return out
        kw = {}
        if self.meta:
            kw = {"title": self.meta[1][0], "units": self.meta[1][1]}
        if self.extra:
            kw["extra"] = self.extra[1]
        return replace(scheme, nodes=upd(scheme.nodes, self.nodes), members=upd(scheme.members, self.members),
                       supports=upd(scheme.supports, self.supports), **kw)


def diff(before: Scheme, after: Scheme) -> Change:
    """The :class:`Change` that turns ``before`` into ``after`` (identity first, then equality)."""
    def d(a: Mapping, b: Mapping):
        out = {}
        for k, v in a.items():
            w = b.get(k)
            if w is not v and w != v:
                out[k] = (v, w)
        for k, w in b.items():
            if k not in a:
                out[k] = (None, w)
        return out
    meta = None
    if (before.title, before.units) != (after.title, after.units):
        meta = ((before.title, before.units), (after.title, after.units))
    extra = (before.extra, after.extra) if before.extra != after.extra else None
    return Change(d(before.nodes, after.nodes), d(before.members, after.members),
                  d(before.supports, after.supports), meta, extra)


class EditCommand(QUndoCommand):
    """One user edit.  Commands with the same ``gesture`` merge (a drag is one step)."""

    MERGE_ID = 7301

    def __init__(self, doc: "Document", text: str, change: Change, gesture: int | None = None):
        super().__init__(text)
        self.doc = doc
        self.change = change
        self.gesture = gesture

    def redo(self) -> None:
        self.doc._apply(self.change)

    def undo(self) -> None:
        self.doc._apply(self.change.inverted())

    def id(self) -> int:  # noqa: A003 - Qt's name
        return self.MERGE_ID if self.gesture is not None else -1

    def mergeWith(self, other: QUndoCommand) -> bool:  # noqa: N802 - Qt's name
        if not isinstance(other, EditCommand) or other.gesture != self.gesture or self.gesture is None:
            return False
        self.change = self.change.then(other.change)
        if self.change.is_empty():
            self.setObsolete(True)  # a drag that came back where it started leaves no step
            if self.change.extra:  # ... and drops nothing
                self.doc._apply(self.change.inverted())
        return True


class Document(QObject):
    """Owns the current :class:`Scheme`, the undo stack, the file path and the selection."""

    #: a :class:`Change` (ids touched) or None when the whole scheme was replaced
    changed = Signal(object)
    selection_changed = Signal()
    path_changed = Signal()

    def __init__(self, scheme: Scheme | None = None, parent: QObject | None = None):
        super().__init__(parent)
        self._scheme = scheme or Scheme()
        self.undo_stack = QUndoStack(self)
        self.path: Path | None = None
        #: bumps on every change; analysis results carry it
        self.revision = 0
        self.selected_nodes: frozenset[str] = frozenset()
        self.selected_members: frozenset[str] = frozenset()

    # ------------------------------------------------------------------ state
    @property
    def scheme(self) -> Scheme:
        return self._scheme

    def is_modified(self) -> bool:
        return not self.undo_stack.isClean()

    def display_name(self) -> str:
        return self.path.name if self.path else "untitled"

    # ------------------------------------------------------------------ the one writer
    def _apply(self, change: Change) -> None:
        self._scheme = change.apply(self._scheme)
        self.revision += 1
        gone_n = {k for k, (_, a) in change.nodes.items() if a is None}
        gone_m = {k for k, (_, a) in change.members.items() if a is None}
        if (gone_n & self.selected_nodes) or (gone_m & self.selected_members):
            self.selected_nodes -= gone_n
            self.selected_members -= gone_m
            self.selection_changed.emit()
        self.changed.emit(change)

    def commit(self, text: str, after: Scheme, gesture: int | None = None) -> bool:
        """Push the edit that turns the current scheme into ``after``; False if nothing changed."""
        return self.commit_change(text, diff(self._scheme, after), gesture)

    def commit_change(self, text: str, change: Change, gesture: int | None = None) -> bool:
        if change.is_empty():
            return False
        self.undo_stack.push(EditCommand(self, text, self._drop_expected(change), gesture))
        return True

    def _drop_expected(self, change: Change) -> Change:
        """An "expected" block (an example's known verdict) no longer describes an edited
        drawing: the first edit drops it, in the same undo step (undo brings it back)."""
        ex = self._scheme.extra
        if "expected" not in ex or change.extra is not None:
            return change
        return replace(change, extra=(ex, {k: v for k, v in ex.items() if k != "expected"}))

    def move_nodes(self, positions: Mapping[str, tuple[float, float]], gesture: int | None = None) -> bool:
        """Move nodes (members follow).  Give one ``gesture`` for all the moves of one drag."""
        change = Change(nodes={nid: (self._scheme.nodes[nid], replace(self._scheme.nodes[nid], x=float(x), y=float(y)))
                               for nid, (x, y) in positions.items()
                               if (self._scheme.nodes[nid].x, self._scheme.nodes[nid].y) != (x, y)})
        return self.commit_change("Move node" if len(positions) == 1 else f"Move {len(positions)} nodes",
                                  change, gesture)

    def replace_scheme(self, scheme: Scheme, path: Path | None = None, *, clean: bool = True) -> None:
        """Start over on ``scheme`` (new / open / restore): clears the undo history."""
        self.undo_stack.clear()
        self._scheme = scheme
        self.revision += 1
        self.path = Path(path) if path else None
        self.selected_nodes = frozenset()
        self.selected_members = frozenset()
        self.changed.emit(None)
        self.selection_changed.emit()
        self.path_changed.emit()
        if not clean:
            # a restored drawing differs from anything on disk: one no-op step marks it modified
            self.undo_stack.resetClean()

    def set_path(self, path: Path | None) -> None:
        self.path = Path(path) if path else None
        self.path_changed.emit()

    # ------------------------------------------------------------------ selection (not undoable)
    def select(self, nodes=(), members=(), *, add: bool = False, toggle: bool = False) -> None:
        nodes, members = frozenset(nodes), frozenset(members)
        if toggle:
            n = self.selected_nodes ^ nodes
            m = self.selected_members ^ members
        elif add:
            n = self.selected_nodes | nodes
            m = self.selected_members | members
        else:
            n, m = nodes, members
        n = frozenset(x for x in n if x in self._scheme.nodes)
        m = frozenset(x for x in m if x in self._scheme.members)
        if (n, m) != (self.selected_nodes, self.selected_members):
            self.selected_nodes, self.selected_members = n, m
            self.selection_changed.emit()

    def clear_selection(self) -> None:
        self.select()
