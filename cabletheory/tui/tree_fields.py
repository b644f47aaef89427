"""The fields of the tree view's time course and electrotonic map: plain data, no numpy.

The stimulus fields are the charging view's own (:data:`~cabletheory.tui.fields.CASE_FIELDS`,
composed by :func:`~cabletheory.tui.widgets.stimulus_form`); on a tree the sites are the
morphology's point labels (SWC ids, outline names, 'soma'), so "stimulus at" and "V(t) at" are
text fields here, read by :func:`cabletheory.inputs.read_tree_case`.
"""

from __future__ import annotations

from .fields import CASE_FIELDS, FieldSpec

__all__ = ["PANELS", "TIME_FIELDS", "TREE_STIMULUS_GROUP"]

# the output panels of the tree view: id -> title on its tab
PANELS: dict[str, str] = {"audit": "audit", "time": "time course", "map": "electrotonic map"}

# the charging view's stimulus fields a tree uses (its site is a point label, not a distance)
TREE_STIMULUS_GROUP = ("current", "clamp", "duration", "time_to_peak")
_CASE = {spec.name: spec for spec in CASE_FIELDS}

TIME_FIELDS: tuple[FieldSpec, ...] = (
    *(_CASE[name] for name in TREE_STIMULUS_GROUP),
    FieldSpec("stimulus_at", "stimulus at", "label", "soma", placeholder="a point label, e.g. soma or 412"),
    FieldSpec("record_at", "V(t) at", "label", "", blank_ok=True,
              placeholder="point labels (blank: the soma and the stimulus point)"),
    FieldSpec("span", "V(t) until", "time", "50 ms"),
    FieldSpec("frequency", "map frequency", "frequency", "0 Hz", allow_zero=True),
)
