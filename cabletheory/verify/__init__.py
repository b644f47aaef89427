r"""Verify a simulator against exact solutions; one job per module.

* :mod:`.reading` reads a simulator's recorded output (:func:`read_recording`, :func:`run_spacings`);
* :mod:`.comparison` compares it with an :class:`ExactCase` (:func:`compare`) and measures observed
  orders of convergence (:func:`convergence`);
* :mod:`.advice` finds the compartments and time step a target accuracy needs
  (:func:`advise_cable`, :func:`advise_tree`);
* :mod:`.tables` puts an exact solution on a grid (:func:`reference_table`) and writes it;
* :mod:`.exact` turns a model and stimulus into an :class:`ExactCase` (:func:`exact_case`).

The names below are re-exported for callers that want the whole toolkit in one import; code
inside the package imports from the module that does the job.

Every exact answer assumes a passive, linear membrane with uniform properties; so does every
verdict. A simulator with active conductances is outside what this package can check.
"""

from __future__ import annotations

from .advice import OUTPUTS, Advice, StepAdvice, advise_cable, advise_tree
from .comparison import Comparison, Convergence, ExactCase, OrderEstimate, compare, convergence
from .exact import exact_case, sealed_step_case, sealed_step_voltage, transient_case
from .reading import QuantityParser, Recording, read_recording, run_spacings
from .tables import (
    STIMULUS_KEYS,
    ReferenceTable,
    csv_header,
    json_number,
    reference_csv,
    reference_json,
    reference_npz,
    reference_table,
    split_stimulus,
)

__all__ = [
    "OUTPUTS",
    "STIMULUS_KEYS",
    "Advice",
    "Comparison",
    "Convergence",
    "ExactCase",
    "OrderEstimate",
    "QuantityParser",
    "Recording",
    "ReferenceTable",
    "StepAdvice",
    "advise_cable",
    "advise_tree",
    "compare",
    "convergence",
    "csv_header",
    "exact_case",
    "json_number",
    "read_recording",
    "reference_csv",
    "reference_json",
    "reference_npz",
    "reference_table",
    "run_spacings",
    "sealed_step_case",
    "sealed_step_voltage",
    "split_stimulus",
    "transient_case",
]
