"""Run settings: methods, validation, choice rule, seed, missing values, stability, focal penalty.

The method check boxes and their tooltips come from ``engine.methods.METHODS`` (declared once,
rendered here). Defaults equal ``StudySpec``'s, so a run works without touching anything.
"""

from __future__ import annotations

__all__ = ["SettingsPanel", "SCHEME_WORDS", "CHOICE_WORDS", "MISSING_WORDS"]

from collections.abc import Mapping
from typing import Any

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QCheckBox,
    QComboBox,
    QDoubleSpinBox,
    QFormLayout,
    QGridLayout,
    QGroupBox,
    QLabel,
    QScrollArea,
    QSpinBox,
    QVBoxLayout,
    QWidget,
)

from engine.methods import DEFAULT_METHODS, METHODS
from engine.study_spec import MAX_TEST_SHARE, StudySpec

SCHEME_WORDS = {
    "kfold": "Shuffled folds",
    "repeated": "Shuffled folds, repeated",
    "grouped": "Folds that keep groups together",
    "time": "Time-ordered blocks",
    "loo": "Leave one row out",
}
SCHEME_TIPS = {
    "kfold": "Rows are shuffled (with the seed) and split into equal parts; each part is held out once.",
    "repeated": "The shuffled split is done several times with different shuffles and the errors averaged; steadier, slower.",
    "grouped": "Rows that share a value in the 'group' column are always held out together (stores, farms, patients).",
    "time": "Rows are put in time order; each block is checked by a model fitted on the blocks before it. "
    "Rows sharing one time (several shops in one week) stay in one block.",
    "loo": "Each row is held out on its own; only sensible for small sheets.",
}
CHOICE_WORDS = {"min": "Lowest validation error", "one-se": "Simplest within one standard error"}
MISSING_WORDS = {
    "drop": "Leave out rows with a missing value",
    "fill": "Fill with the median and mark the gap",
}
FOCAL_WORDS = {"plugin": "Formula-based (plug-in)", "cv": "By validation"}
SCORING_AUTO = "Smallest held-out error"

_DEFAULT = StudySpec(source="", response="")
_CATALOGUE = [m.name for m in METHODS]


def _method_order(name: str) -> int:
    """The default methods run in their default order, the others after them in catalogue order."""
    if name in DEFAULT_METHODS:
        return DEFAULT_METHODS.index(name)
    return len(DEFAULT_METHODS) + _CATALOGUE.index(name)


class SettingsPanel(QScrollArea):
    """A form whose ``values()`` are StudySpec field names; ``changed`` fires on every edit."""

    changed = Signal()

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWidgetResizable(True)
        body = QWidget()
        body.setObjectName("page")
        self.setWidget(body)
        outer = QVBoxLayout(body)

        # methods, grouped by family, straight from the catalogue
        box = QGroupBox("Methods")
        box.setToolTip(
            "Which ways of choosing columns to run and compare. Each has its own tooltip."
        )
        grid = QGridLayout(box)
        self.method_boxes: dict[str, QCheckBox] = {}
        families: list[str] = []
        for m in METHODS:
            if m.family not in families:
                families.append(m.family)
        for col, fam in enumerate(families):
            head = QLabel(fam.capitalize())
            head.setObjectName("caption")
            grid.addWidget(head, 0, col)
            row = 1
            for m in METHODS:
                if m.family != fam:
                    continue
                cb = QCheckBox(m.title)
                cb.setToolTip(m.help)
                cb.setChecked(m.name in DEFAULT_METHODS)
                cb.toggled.connect(self._on_change)
                grid.addWidget(cb, row, col)
                self.method_boxes[m.name] = cb
                row += 1
        grid.setRowStretch(grid.rowCount(), 1)
        outer.addWidget(box)

        form_box = QGroupBox("Validation and choice")
        form = QFormLayout(form_box)
        form.setFieldGrowthPolicy(QFormLayout.FieldGrowthPolicy.FieldsStayAtSizeHint)

        self.scheme = self._combo(SCHEME_WORDS, _DEFAULT.scheme, SCHEME_TIPS)
        self._row(
            form,
            "Validation",
            self.scheme,
            "How rows are held out to measure prediction error on data the fit has not seen.",
        )
        self.folds = self._spin(2, 100, _DEFAULT.folds)
        self._row(
            form,
            "Parts (folds)",
            self.folds,
            "Into how many parts the rows are split; each part is held out once. 5 or 10 is usual.",
        )
        self.repeats = self._spin(1, 50, _DEFAULT.repeats)
        self._row(
            form,
            "Repeats",
            self.repeats,
            "How many different shuffles to average over (only for 'Shuffled folds, repeated').",
        )
        self.choose = self._combo(CHOICE_WORDS, _DEFAULT.choose)
        self._row(
            form,
            "Choose the penalty by",
            self.choose,
            "Lowest validation error: the best-scoring point. Simplest within one standard error: "
            "the fewest columns whose error is statistically as good; usually a smaller set.",
        )
        self.scoring = QComboBox()
        self.scoring.addItem(SCORING_AUTO, None)
        self.scoring.currentIndexChanged.connect(self._on_change)
        self._row(
            form,
            "Scoring sheet uses",
            self.scoring,
            "Which method's model goes into the workbook's scoring sheet, where colleagues paste "
            "new rows. By default the one with the smallest held-out error; a simpler model "
            "(the lasso rather than least squares after it, say) may be easier to hand over.",
        )
        self.test_percent = self._spin(
            0, int(MAX_TEST_SHARE * 100), round(_DEFAULT.test_share * 100)
        )
        self.test_percent.setSuffix(" %")
        self.test_percent.setSpecialValueText("none")
        self._row(
            form,
            "Final test rows",
            self.test_percent,
            "Hold back this share of the rows before anything is fitted: no fit and no choice "
            "sees them, and each method's error on them is shown beside the validation error. "
            "With a time order, the latest rows are held back; with a group column, whole groups.",
        )
        self.seed = self._spin(0, 2_147_483_647, _DEFAULT.seed)
        self._row(
            form,
            "Seed",
            self.seed,
            "Starting number for the random shuffles. The same seed gives the same result every time.",
        )
        self.n_penalties = self._spin(10, 500, _DEFAULT.n_penalties)
        self._row(
            form,
            "Points on each path",
            self.n_penalties,
            "How many penalty values from 'nothing chosen' to 'little shrinkage' are tried. More is finer and slower.",
        )
        self.mix = QDoubleSpinBox()
        self.mix.setRange(0.0, 1.0)
        self.mix.setSingleStep(0.05)
        self.mix.setDecimals(2)
        self.mix.setValue(_DEFAULT.mix)
        self.mix.valueChanged.connect(self._on_change)
        self._row(
            form,
            "Elastic-net blend",
            self.mix,
            "For the elastic net: 1 behaves like the lasso, 0 like ridge; 0.5 is halfway.",
        )
        outer.addWidget(form_box)

        data_box = QGroupBox("Data handling")
        form2 = QFormLayout(data_box)
        form2.setFieldGrowthPolicy(QFormLayout.FieldGrowthPolicy.FieldsStayAtSizeHint)
        self.missing = self._combo(MISSING_WORDS, _DEFAULT.missing)
        self._row(
            form2,
            "Missing values",
            self.missing,
            "Leave out rows: any row with an empty candidate or response cell is not used. "
            "Fill: a gap in a candidate gets the column's median and a new yes/no column says it was empty.",
        )
        self.date_parts = QCheckBox("Add month and weekday for date columns")
        self.date_parts.setChecked(_DEFAULT.date_parts)
        self.date_parts.toggled.connect(self._on_change)
        self._row(
            form2,
            "Dates",
            self.date_parts,
            "Besides the trend over time, let each month and weekday have its own level.",
        )
        self.stability_runs = self._spin(0, 2000, _DEFAULT.stability_runs)
        self.stability_runs.setSpecialValueText("off")
        self._row(
            form2,
            "Stability half-samples",
            self.stability_runs,
            "Refit the lasso on this many random halves of the rows and report how often each column "
            "is chosen. 100 is a good start; 'off' skips it.",
        )
        self.focal_penalty = self._combo(FOCAL_WORDS, _DEFAULT.focal_penalty)
        self._row(
            form2,
            "Focal effect penalty",
            self.focal_penalty,
            "Only used when a column has the role 'focal'. Formula-based is the published default; "
            "'by validation' picks the penalty like the other methods.",
        )
        outer.addWidget(data_box)
        outer.addStretch(1)
        self.scheme.currentIndexChanged.connect(self._sync_enabled)
        self._sync_enabled()

    # helpers ----------------------------------------------------------------------------
    def _combo(
        self, words: Mapping[str, str], default: str, tips: Mapping[str, str] | None = None
    ) -> QComboBox:
        box = QComboBox()
        for key, text in words.items():
            box.addItem(text, key)
            if tips:
                box.setItemData(box.count() - 1, tips[key], Qt.ItemDataRole.ToolTipRole)
        box.setCurrentIndex(box.findData(default))
        box.currentIndexChanged.connect(self._on_change)
        return box

    def _spin(self, lo: int, hi: int, default: int) -> QSpinBox:
        s = QSpinBox()
        s.setRange(lo, hi)
        s.setValue(default)
        s.valueChanged.connect(self._on_change)
        return s

    @staticmethod
    def _row(form: QFormLayout, label: str, widget: QWidget, tip: str) -> None:
        lab = QLabel(label)
        lab.setToolTip(tip)
        widget.setToolTip(tip)
        form.addRow(lab, widget)

    def _on_change(self, *_: object) -> None:
        self._sync_enabled()
        self.changed.emit()

    def _sync_enabled(self) -> None:
        self._refill_scoring()
        scheme = self.scheme.currentData()
        self.folds.setEnabled(scheme != "loo")
        self.repeats.setEnabled(scheme == "repeated")
        self.mix.setEnabled(self.method_boxes["elastic-net"].isChecked())

    def _refill_scoring(self, wanted: str | None = None) -> None:
        """The scoring choices follow the ticked methods; a choice whose method was unticked
        falls back to the default."""
        current = wanted if wanted is not None else self.scoring.currentData()
        ticked = [m for m in METHODS if self.method_boxes[m.name].isChecked()]
        self.scoring.blockSignals(True)
        try:
            self.scoring.clear()
            self.scoring.addItem(SCORING_AUTO, None)
            for m in ticked:
                self.scoring.addItem(m.title, m.name)
            at = self.scoring.findData(current) if current is not None else 0
            self.scoring.setCurrentIndex(max(at, 0))
        finally:
            self.scoring.blockSignals(False)

    # values -----------------------------------------------------------------------------
    def values(self) -> dict[str, Any]:
        return {
            "methods": tuple(
                sorted(
                    (n for n, cb in self.method_boxes.items() if cb.isChecked()), key=_method_order
                )
            ),
            "mix": float(self.mix.value()),
            "folds": int(self.folds.value()),
            "scheme": self.scheme.currentData(),
            "repeats": int(self.repeats.value()),
            "choose": self.choose.currentData(),
            "seed": int(self.seed.value()),
            "n_penalties": int(self.n_penalties.value()),
            "missing": self.missing.currentData(),
            "date_parts": bool(self.date_parts.isChecked()),
            "stability_runs": int(self.stability_runs.value()),
            "focal_penalty": self.focal_penalty.currentData(),
            "scoring_method": self.scoring.currentData(),
            "test_share": self.test_percent.value() / 100.0,
        }

    def set_values(self, values: Mapping[str, Any]) -> None:
        """Apply remembered or saved settings; unknown keys and bad values are skipped."""
        self.blockSignals(True)
        try:
            if "methods" in values:
                chosen = set(values["methods"] or ())
                for n, cb in self.method_boxes.items():
                    cb.setChecked(n in chosen)
            for key, box in (
                ("scheme", self.scheme),
                ("choose", self.choose),
                ("missing", self.missing),
                ("focal_penalty", self.focal_penalty),
            ):
                if key in values and box.findData(values[key]) >= 0:
                    box.setCurrentIndex(box.findData(values[key]))
            for key, spin in (
                ("folds", self.folds),
                ("repeats", self.repeats),
                ("seed", self.seed),
                ("n_penalties", self.n_penalties),
                ("stability_runs", self.stability_runs),
            ):
                if isinstance(values.get(key), int | float):
                    spin.setValue(int(values[key]))
            if isinstance(values.get("test_share"), int | float):
                self.test_percent.setValue(round(float(values["test_share"]) * 100))
            if isinstance(values.get("mix"), int | float):
                self.mix.setValue(float(values["mix"]))
            if "date_parts" in values:
                self.date_parts.setChecked(bool(values["date_parts"]))
            wanted = values.get("scoring_method")
            self._refill_scoring(wanted if isinstance(wanted, str) else None)
            if "scoring_method" in values and not isinstance(wanted, str):
                self.scoring.setCurrentIndex(0)
        finally:
            self.blockSignals(False)
        self._sync_enabled()
        self.changed.emit()
