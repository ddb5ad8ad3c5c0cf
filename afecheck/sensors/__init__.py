"""Sensor models from their published equations: what a sensor presents to the front end over its measurand.

Each module is pure arithmetic (no circuit): thermistors (Beta and Steinhart-Hart), platinum RTDs
(Callendar-Van Dusen, IEC 60751), thermocouples (ITS-90 reference functions) and resistive bridges.
"""
