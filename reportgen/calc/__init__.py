"""The numeric core: phasors, power, sizing and checks.

Everything in this package is pure: it imports only the standard library and
NumPy, reads no files, knows nothing of YAML or templates, and works in SI
units (W, var, VA, V, A, Hz, ohm, H, F, s). A load's reactive power is
positive when inductive (lagging); a capacitor bank's kvar is reported as a
positive delivered (capacitive) quantity.
"""
