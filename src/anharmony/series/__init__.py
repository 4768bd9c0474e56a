"""Rayleigh–Schrödinger perturbation series (placeholder while the kernels are written)."""
