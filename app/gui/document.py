"""The project held in memory: the JSON document dict, its undo stack, and the
last good SI model.

Every edit is a QUndoCommand that changes the document dict (which keeps the
user's text with units and any unknown keys).  After each change the SI
:class:`~core.model.Train` is rebuilt with :func:`core.project.build_train`;
when that raises :class:`~core.errors.ModelError` the last good train stays
current (so the results keep showing) and the error is reported with the
element and field it names.
"""
from __future__ import annotations

import copy
from pathlib import Path

from PySide6 import QtCore, QtGui

from core.errors import ModelError
from core.project import build_train, load_document, save_document

_MISSING = object()


def get_path(doc, path):
    """Value at ``path`` (a tuple of keys / list indices), or None."""
    obj = doc
    for key in path:
        try:
            obj = obj[key]
        except (KeyError, IndexError, TypeError):
            return None
    return obj


def _set_path(doc, path, value):
    obj = doc
    for key in path[:-1]:
        if isinstance(obj, dict) and key not in obj:
            obj[key] = {}
        obj = obj[key]
    if value is _MISSING:
        if isinstance(obj, dict):
            obj.pop(path[-1], None)
    else:
        obj[path[-1]] = value


#: objects nested at least this deep (("links", 3, "fatigue") is 3) are removed with their
#: last key: clearing every field of a fatigue check or a mesh-stiffness group leaves no '{}'
PRUNE_DEPTH = 3


def _created_at(doc, path) -> tuple | None:
    """The shortest prefix of ``path`` that names an object not yet in ``doc`` (setting the
    value creates it), or None when only the leaf is new."""
    obj = doc
    for n, key in enumerate(path[:-1]):
        if isinstance(obj, dict) and key not in obj:
            return tuple(path[:n + 1])
        try:
            obj = obj[key]
        except (KeyError, IndexError, TypeError):
            return None
    return None


def _prune(doc, path) -> None:
    """Remove the now empty objects holding ``path``'s leaf, deepest first, down to PRUNE_DEPTH."""
    for n in range(len(path) - 1, PRUNE_DEPTH - 1, -1):
        parent, key = get_path(doc, path[:n - 1]), path[n - 1]
        holder = get_path(doc, path[:n])
        if isinstance(parent, dict) and isinstance(holder, dict) and not holder:
            parent.pop(key, None)
        else:
            return


class SetValue(QtGui.QUndoCommand):
    """One field changed (``value`` None removes the key).

    Undo restores the document exactly: objects the edit created on the way to the
    key (a first fatigue value creates ``"fatigue": {}``) go again, and objects the
    removal left empty (and so removed) come back."""

    def __init__(self, project: "Project", path: tuple, value, text: str):
        super().__init__(text)
        self.project, self.path = project, tuple(path)
        old = get_path(project.doc, self.path)
        self.old = _MISSING if old is None else copy.deepcopy(old)
        self.new = _MISSING if value is None else copy.deepcopy(value)
        self.created = None if self.new is _MISSING else _created_at(project.doc, self.path)
        self._done = False  # the first redo is the edit itself; later ones come from the history

    def redo(self):
        _set_path(self.project.doc, self.path, _copy(self.new))
        if self.new is _MISSING:
            _prune(self.project.doc, self.path)
        self.project._changed(from_history=self._done)
        self._done = True

    def undo(self):
        if self.created is not None:
            parent = get_path(self.project.doc, self.created[:-1])
            if isinstance(parent, dict):
                parent.pop(self.created[-1], None)
        else:
            _set_path(self.project.doc, self.path, _copy(self.old))
        self.project._changed(from_history=True)


def _copy(value):
    """A deep copy that keeps the 'no value' marker itself (deepcopy would make a new
    object, and undoing an edit of a field that was absent would store that object)."""
    return value if value is _MISSING else copy.deepcopy(value)


class ReplaceDocument(QtGui.QUndoCommand):
    """A structural edit (insert, delete, rename): the whole document before and after."""

    def __init__(self, project: "Project", new_doc: dict, text: str):
        super().__init__(text)
        self.project = project
        self.before = copy.deepcopy(project.doc)
        self.after = copy.deepcopy(new_doc)
        self._done = False

    def redo(self):
        self.project.doc = copy.deepcopy(self.after)
        self.project._changed(from_history=self._done)
        self._done = True

    def undo(self):
        self.project.doc = copy.deepcopy(self.before)
        self.project._changed(from_history=True)


class Project(QtCore.QObject):
    """Document + undo stack + last good train.

    Signals: ``documentChanged`` after every change of the dict;
    ``trainChanged(train)`` when a new valid train was built;
    ``errorChanged(error_or_None)`` when the model's problem appears, changes
    or goes away; ``fileChanged`` when the path or clean state changes.
    ``from_history`` is True while views refresh after an undo, a redo or a new
    document (the document then replaces any text still being typed in a field).
    """

    documentChanged = QtCore.Signal()
    trainChanged = QtCore.Signal(object)
    errorChanged = QtCore.Signal(object)
    fileChanged = QtCore.Signal()

    def __init__(self, parent=None):
        super().__init__(parent)
        self.doc: dict = {}
        self.path: Path | None = None
        self.base_dir: Path | None = None  # relative file names in the document are read from here
        self.train = None
        self.error: ModelError | None = None
        self.from_history = False
        self.undo_stack = QtGui.QUndoStack(self)
        self.undo_stack.cleanChanged.connect(self._clean_changed)

    def _clean_changed(self, _clean) -> None:
        # a bound method, not a lambda: Qt drops the connection with the object (a lambda
        # outlived the project at quit and raised "Signal source has been deleted")
        self.fileChanged.emit()

    # ------------------------------------------------------------ state
    @property
    def dirty(self) -> bool:
        return not self.undo_stack.isClean()

    @property
    def title(self) -> str:
        t = self.doc.get("title") if isinstance(self.doc, dict) else None
        return str(t) if t else "Untitled train"

    @property
    def file_name(self) -> str:
        return self.path.name if self.path else "not saved yet"

    def get(self, path):
        return get_path(self.doc, path)

    # ------------------------------------------------------------ files
    def set_document(self, doc: dict, path=None) -> None:
        """Start on a new document (file opened, new train): clears the undo history."""
        self.undo_stack.clear()
        self.doc = copy.deepcopy(doc)
        self.path = Path(path) if path else None
        self.base_dir = self._folder(doc, self.path)
        self.train = None
        self._changed(from_history=True)
        self.undo_stack.setClean()
        self.fileChanged.emit()

    @staticmethod
    def _folder(doc, path) -> Path | None:
        """The folder relative file names are read from: the file's, else the folder the
        document was read from (a sample opened as a new project), else none."""
        if path is not None:
            return Path(path).resolve().parent
        base = getattr(doc, "base_dir", None)
        return Path(base) if base else None

    def open(self, path) -> None:
        """Read a project file (raises ProjectFileError when it is not one); a
        document that does not build still opens, with its error shown."""
        self.set_document(load_document(path), path)

    def save(self, path=None) -> Path:
        """Atomic save; the file replaced is kept as ``NAME.json.bak1`` (older ones as bak2,
        bak3: core.project.save_document)."""
        target = Path(path) if path else self.path
        if target is None:
            raise ValueError("no file name")
        save_document(target, self.doc)
        self.path = target
        folder = self._folder(self.doc, target)
        self.undo_stack.setClean()
        if folder != self.base_dir:  # Save As elsewhere: relative files are read from there now
            self.base_dir = folder
            self._changed(from_history=False)
        self.fileChanged.emit()
        return target

    # ------------------------------------------------------------ edits
    def set_value(self, path, value, text: str | None = None) -> None:
        if get_path(self.doc, path) == value:
            return
        self.undo_stack.push(SetValue(self, path, value, text or f"Edit {path[-1]}"))

    def replace(self, new_doc: dict, text: str) -> None:
        if new_doc == self.doc:
            return
        self.undo_stack.push(ReplaceDocument(self, new_doc, text))

    def _changed(self, from_history: bool = False) -> None:
        # rebuild first, so views refreshing on documentChanged see the current error
        self.rebuild()
        self.from_history = from_history
        try:
            self.documentChanged.emit()
        finally:
            self.from_history = False

    def rebuild(self) -> None:
        try:
            train = build_train(self.doc, base_dir=self.base_dir)
        except ModelError as exc:
            self._set_error(exc)
            return
        except Exception as exc:  # never a traceback in front of the user
            self._set_error(ModelError(f"cannot build the model ({type(exc).__name__}: {exc})", "train"))
            return
        self.train = train
        self._set_error(None)
        self.trainChanged.emit(train)

    def _set_error(self, error) -> None:
        same = (error is None and self.error is None) or (
            error is not None and self.error is not None and str(error) == str(self.error))
        self.error = error
        if not same:
            self.errorChanged.emit(error)

    # ------------------------------------------------------------ where an error sits
    def error_at(self, element: str, field: str | None = None) -> str | None:
        """The current model error's message when it concerns ``element``
        (e.g. "disc 'motor'") and, if given, ``field`` (a prefix match, so
        'material' also catches 'material.density')."""
        e = self.error
        if e is None or e.element != element:
            return None
        if field is None or e.field is None:
            return e.message
        if e.field == field or e.field.startswith(field + "."):
            return e.message
        return None
