"""Sensor models from their published equations: what a sensor presents to the front end over its measurand.

The models are pure arithmetic (no circuit): thermistors (Beta and Steinhart-Hart), platinum RTDs
(Callendar-Van Dusen, IEC 60751), thermocouples (ITS-90 reference functions, their Seebeck coefficients and
``cold_junction``, what the reading gets wrong about the reference junction) and resistive bridges. Two modules
solve the circuit a sensor sits in: ``measurand`` (a net's volts per measurand unit, for findings stated at the
sensor, and what every budget analysis asks of a sensor) and ``self_heating`` (the power the excitation puts into
a sensor).
"""
