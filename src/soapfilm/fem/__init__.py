"""Finite element kernels: basis, assembly, the two torsion problems."""
