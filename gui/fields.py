"""Input controls with inline errors: the engine validates, the control shows what it said.

A :class:`Field` is a line edit plus an error line under it. When the user
commits (Enter or leaving the field), its text is parsed and handed to an
``apply`` callback, which asks the engine; a
:class:`starkiln.engine.errors.StarkilnError` (or a parse failure) is shown inline and
the last good state stays as it was.
"""

from __future__ import annotations

import math
from typing import Callable

from PySide6 import QtCore, QtGui, QtWidgets

from starkiln.engine.errors import StarkilnError

#: What a failed parse or a rejected value may raise (StarkilnError is a ValueError).
INPUT_ERRORS = (StarkilnError, ValueError, TypeError, OverflowError)


def parse_number(text: str, what: str) -> float:
    """A finite float from user text, or StarkilnError naming the text and what is accepted."""
    cleaned = str(text).strip().replace("\u2212", "-").replace(",", ".")
    try:
        value = float(cleaned)
    except ValueError:
        raise StarkilnError(f"{what}: {text.strip()!r} is not a number") from None
    if not math.isfinite(value):
        raise StarkilnError(f"{what}: {text.strip()!r} is not a finite number")
    return value


def parse_optional_number(text: str, what: str):
    """Like :func:`parse_number`, but an empty field means None."""
    return None if not str(text).strip() else parse_number(text, what)


def set_role(widget: QtWidgets.QWidget, name: str, value) -> None:
    """Set a dynamic property used by the style sheet and re-polish the widget."""
    widget.setProperty(name, value)
    style = widget.style()
    style.unpolish(widget)
    style.polish(widget)


class ErrorLine(QtWidgets.QLabel):
    """A one-line (wrapping) error message under a control; hidden when there is none."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setProperty("role", "error")
        self.setWordWrap(True)
        self.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        self.hide()

    def show_error(self, message: str) -> None:
        """Show ``message`` (prefixed with a warning sign)."""
        self.setText("\u26a0 " + message)
        self.show()

    def clear_error(self) -> None:
        """Hide the message."""
        self.setText("")
        self.hide()


class Field(QtWidgets.QWidget):
    """A line edit whose committed text goes through ``parse`` then ``apply``.

    Parameters
    ----------
    name : str
        objectName of the line edit (``field-<name>``) and of the error line.
    parse : callable(str) -> value
        May raise; see :data:`INPUT_ERRORS`.
    apply : callable(value) -> None
        Hands the value to the engine/session; may raise StarkilnError.
    placeholder, tooltip : str
    width : int, optional
        Fixed width of the line edit in pixels.
    """

    committed = QtCore.Signal(object)

    def __init__(self, name: str, parse: Callable, apply: Callable, placeholder: str = "",
                 tooltip: str = "", width: int | None = None, unit: str = "", parent=None):
        super().__init__(parent)
        self._parse, self._apply = parse, apply
        self.edit = QtWidgets.QLineEdit(self)
        self.edit.setObjectName(f"field-{name}")
        self.edit.setPlaceholderText(placeholder)
        if tooltip:
            self.edit.setToolTip(tooltip)
        if width:
            self.edit.setFixedWidth(width)
        self.error = ErrorLine(self)
        self.error.setObjectName(f"error-{name}")
        row = QtWidgets.QHBoxLayout()
        row.setContentsMargins(0, 0, 0, 0)
        row.setSpacing(4)
        row.addWidget(self.edit)
        if unit:
            u = QtWidgets.QLabel(unit, self)
            u.setProperty("role", "muted")
            row.addWidget(u)
        row.addStretch(1)
        col = QtWidgets.QVBoxLayout(self)
        col.setContentsMargins(0, 0, 0, 0)
        col.setSpacing(1)
        col.addLayout(row)
        col.addWidget(self.error)
        self._last_text = None
        self.edit.editingFinished.connect(self._commit)

    def take_error(self) -> ErrorLine:
        """Remove the error line from under the field, for the caller to place (e.g. full width)."""
        self.layout().removeWidget(self.error)
        return self.error

    def text(self) -> str:
        """The text in the line edit."""
        return self.edit.text()

    def set_text(self, text: str) -> None:
        """Show ``text`` as the good state (clears the error)."""
        self.edit.blockSignals(True)
        self.edit.setText(text)
        self.edit.blockSignals(False)
        self._last_text = text
        self.clear_error()

    def commit_text(self, text: str) -> bool:
        """Type ``text`` and commit it, as the user would; returns whether it was accepted."""
        self.edit.setText(text)
        return self._commit(force=True)

    def show_error(self, message: str) -> None:
        """Mark the field invalid and show ``message`` under it."""
        set_role(self.edit, "invalid", True)
        self.error.show_error(message)

    def clear_error(self) -> None:
        """Mark the field valid."""
        if self.edit.property("invalid"):
            set_role(self.edit, "invalid", False)
        self.error.clear_error()

    @property
    def has_error(self) -> bool:
        """Whether an error is shown."""
        return not self.error.isHidden() and bool(self.error.text())

    def _commit(self, force: bool = False) -> bool:
        text = self.edit.text()
        if not force and text == self._last_text and not self.has_error:
            return True
        try:
            value = self._parse(text)
            self._apply(value)
        except INPUT_ERRORS as exc:
            self.show_error(str(exc))
            return False
        self._last_text = text
        self.clear_error()
        self.committed.emit(value)
        return True


class Choice(QtWidgets.QWidget):
    """A combo box of engine options; a change goes through ``apply`` with inline errors."""

    def __init__(self, name: str, options, apply: Callable, labels: dict | None = None,
                 tooltip: str = "", parent=None):
        super().__init__(parent)
        self._apply = apply
        self.combo = QtWidgets.QComboBox(self)
        self.combo.setObjectName(f"choice-{name}")
        self.combo.setSizeAdjustPolicy(
            QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.combo.setMinimumContentsLength(10)
        if tooltip:
            self.combo.setToolTip(tooltip)
        labels = labels or {}
        for opt in options:
            self.combo.addItem(labels.get(opt, str(opt)), opt)
        self.error = ErrorLine(self)
        col = QtWidgets.QVBoxLayout(self)
        col.setContentsMargins(0, 0, 0, 0)
        col.setSpacing(1)
        col.addWidget(self.combo)
        col.addWidget(self.error)
        self._current = self.combo.currentData()
        self.combo.currentIndexChanged.connect(self._changed)

    def value(self):
        """The option currently chosen."""
        return self.combo.currentData()

    def set_value(self, value) -> None:
        """Show ``value`` as chosen without applying it."""
        i = self.combo.findData(value)
        if i >= 0:
            self.combo.blockSignals(True)
            self.combo.setCurrentIndex(i)
            self.combo.blockSignals(False)
            self._current = value
        self.error.clear_error()

    def _changed(self, _index: int) -> None:
        value = self.combo.currentData()
        try:
            self._apply(value)
        except INPUT_ERRORS as exc:
            self.error.show_error(str(exc))
            self.set_value_silently(self._current)
            return
        self._current = value
        self.error.clear_error()

    def set_value_silently(self, value) -> None:
        """Return the combo to ``value`` without applying (keeps any error shown)."""
        i = self.combo.findData(value)
        if i >= 0:
            self.combo.blockSignals(True)
            self.combo.setCurrentIndex(i)
            self.combo.blockSignals(False)


def format_number(v) -> str:
    """A number as a field shows it (``%g``); ``None`` as an empty field."""
    return "" if v is None else f"{float(v):g}"


class Form(QtWidgets.QWidget):
    """A two-column form with muted labels."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.form = QtWidgets.QFormLayout(self)
        self.form.setContentsMargins(8, 8, 8, 8)
        self.form.setHorizontalSpacing(8)
        self.form.setVerticalSpacing(5)
        self.form.setLabelAlignment(QtCore.Qt.AlignmentFlag.AlignRight |
                                    QtCore.Qt.AlignmentFlag.AlignTop)

    def row(self, label: str, widget: QtWidgets.QWidget, tip: str = "", errors=()):
        """A labelled row; the error lines of ``widget`` (a Field) or ``errors`` go under it,
        across the whole width of the form."""
        lab = QtWidgets.QLabel(label, self)
        lab.setProperty("role", "muted")
        if tip:
            lab.setToolTip(tip)
            widget.setToolTip(tip)
            inner = getattr(widget, "edit", None) or getattr(widget, "combo", None)
            if inner is not None and not inner.toolTip():
                inner.setToolTip(tip)  # the control itself, where the pointer rests
        self.form.addRow(lab, widget)
        if isinstance(widget, Field):
            errors = (widget, *errors)
        for f in errors:
            self.form.addRow(f.take_error())
        return widget

    def note(self, text: str) -> QtWidgets.QLabel:
        lab = QtWidgets.QLabel(text, self)
        lab.setWordWrap(True)
        lab.setProperty("role", "muted")
        self.form.addRow(lab)
        return lab


class CheckedSpin(QtWidgets.QDoubleSpinBox):
    """A number spin box whose arrows keep inside its range, and whose typed values outside
    it are refused with a one-line error instead of being silently clamped.

    Parameters
    ----------
    name : str
        objectName (``spin-<name>``); the error line is ``error-<name>``.
    apply : callable(float) -> None
        Hands an accepted value to the model (may raise; the error is shown, the spin goes
        back to its last good value).
    refused : callable(float) -> str
        The one-line message for a typed value outside the range (the engine's words where
        the engine draws the limit).
    """

    def __init__(self, name: str, apply: Callable, refused: Callable, parent=None):
        super().__init__(parent)
        self.setObjectName(f"spin-{name}")
        self.setKeyboardTracking(False)
        self._apply, self._refused = apply, refused
        self._typed: str | None = None
        self._good = self.value()
        self.error = ErrorLine(parent)
        self.error.setObjectName(f"error-{name}")
        self.valueChanged.connect(self._changed)
        self.editingFinished.connect(self._finished)

    def set_value(self, value: float) -> None:
        """Show ``value`` as the good state (no apply; clears the error)."""
        self._show(value)
        self.error.clear_error()

    def _show(self, value: float) -> None:
        self.blockSignals(True)
        self.setValue(float(value))
        self.blockSignals(False)
        self._good = self.value()

    def set_range(self, lo: float, hi: float) -> None:
        """New limits (without applying the clamped value, if any)."""
        self.blockSignals(True)
        self.setRange(lo, hi)
        self.blockSignals(False)

    def commit_text(self, text: str) -> bool:
        """Type ``text`` and press Enter, as the user would; returns whether it was taken."""
        self.lineEdit().setText(text)
        self.interpretText()
        self._finished()
        return not self.has_error

    @property
    def has_error(self) -> bool:
        """Whether an error is shown."""
        return not self.error.isHidden() and bool(self.error.text())

    def validate(self, text, pos):  # noqa: D102 - Qt API: let a number outside be typed
        try:
            v = float(self._clean(text))
        except ValueError:
            return super().validate(text, pos)
        if self.minimum() <= v <= self.maximum():
            return super().validate(text, pos)
        return (QtGui.QValidator.State.Intermediate, text, pos)

    def fixup(self, text):  # noqa: D102 - Qt API: a number outside is noted, then refused
        self._typed = text
        return self.textFromValue(self.value())

    def _clean(self, text: str) -> str:
        t = str(text).strip().replace("\u2212", "-").replace(",", ".")
        suffix = self.suffix().strip()
        return t[:-len(suffix)].strip() if suffix and t.endswith(suffix) else t

    def _changed(self, value: float) -> None:
        try:
            self._apply(float(value))
        except INPUT_ERRORS as exc:
            self.error.show_error(str(exc))
            self._show(self._good)  # the last good value stays
            return
        self._good = float(value)
        self.error.clear_error()

    def _finished(self) -> None:
        typed, self._typed = self._typed, None
        if typed is None:
            return
        try:
            v = float(self._clean(typed))
        except ValueError:
            return
        if not math.isfinite(v) or not self.minimum() <= v <= self.maximum():
            self.error.show_error(self._refused(v))

    def take_error(self) -> ErrorLine:
        """The error line, for the form to place under the row."""
        return self.error
