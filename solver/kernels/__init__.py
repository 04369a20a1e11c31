"""Numba kernels: private, arrays and scalars only, no orchestration.

Modules here are compared in tests with plain-numpy implementations of the same
maths (tests/reference_fr.py).
"""
