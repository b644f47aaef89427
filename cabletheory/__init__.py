"""cabletheory: closed-form answers for passive neuronal cables.

Every result in this package assumes a passive, linear membrane whose specific
resistance, capacitance and axial resistivity are uniform. Active (voltage-gated)
conductances are outside that model; do not read a result as valid for them.

The core modules (``cable``, ``transient``, ``tree`` ...) take and return plain SI
floats or numpy arrays and never import pint, textual, matplotlib or argparse.
"""

__version__ = "0.1.0"

PASSIVE_CAVEAT = (
    "Results assume a passive, linear, uniform membrane; they do not describe "
    "voltage-gated (active) dendrites. Experimental decisions remain your own judgment."
)
