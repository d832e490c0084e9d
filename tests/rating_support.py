"""A small design for the rating tests and the ``rate`` command tests (invented values)."""

from __future__ import annotations

ONE_RAIL = """title = "rating test (invented)"
[mains]
frequency = "50 Hz"
tolerance = "10 %"
[transformer]
winding = "center-tapped"
open_circuit = "300 V"
resistance = "60 ohm"
[rectifier]
kind = "silicon"
arrangement = "full-wave"
[[rail]]
name = "plates"
link = "wire"
capacitor = { capacitance = "100 uF", esr = "1 ohm" }
current = "200 mA"
"""

PREAMP_RAIL = """[[rail]]
name = "preamp"
link = { kind = "resistor", resistance = "10 kohm" }
capacitor = { capacitance = "47 uF" }
current = "5 mA"
"""
