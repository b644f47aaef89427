"""Worked example: the Tidewater Station dendrite from Python, with units, as in a notebook.

Each block below is one notebook cell. The values are the invented demo dendrite of the sea slug
Lumenia vadosa (DEVELOPERS.md, demo scenario): 20 kΩ·cm², 200 Ω·cm, 1 µF/cm², 2 µm × 500 µm,
an alpha-shaped synaptic current of 100 pA peaking at 0.5 ms, halfway along.

Run from the project root:  .venv/bin/python worked/python_notebook/run.py
tests/test_worked.py checks that it prints expected.txt, and its numbers against outside values.
"""

import pint

from cabletheory import quantities as cq

# --- cell 1: the case, typed the way one writes it down (text, pint quantities, bare numbers) -------
ureg = pint.UnitRegistry()
dendrite = cq.case(
    membrane_resistivity="20 kΩ·cm²",
    axial_resistivity=200,  # bare: Ω·cm, as on the command line
    diameter=2 * ureg.micrometer,  # a quantity from the notebook's own registry
    length="500 µm",
    shape="alpha",
    current="100 pA",
    time_to_peak=0.5 * ureg.millisecond,
    stimulus_at="250 µm",
)
print(dendrite.describe())
print(cq.as_table(dendrite.parameters()))

# --- cell 2: the exact time course; in a notebook the bare name renders as a table with units -----
course = cq.time_course(dendrite, times="0:20:2 ms", positions="0, 250, 500 µm")
print()
print(course._repr_markdown_())

# --- cell 3: a table for pandas, and the figures one reads off an EPSP ------------------------------
frame = course.to_frame()
print()
print(frame.head(6).to_string(index=False, float_format=lambda v: f"{v:.6g}"))
print(f"columns: {list(frame.columns)}; {len(frame)} rows")
for f in course.features():
    print(f"at {f.position * 1e6:5.0f} µm: peak {f.peak * 1e3:.4f} mV at {f.time_to_peak * 1e3:.4f} ms, "
          f"half-width {f.half_width * 1e3:.3f} ms, attenuation {f.attenuation:.4f}")
