"""Physics core of gapmatch: spectra, detailed balance, connection models.

Nothing in this sub-package reads or writes files or draws figures. Every function is
vectorised over a batch of stacks (arrays of shape ``(M, N)`` for ``M`` stacks of ``N``
junctions) and works in SI units: energies in J, current densities in A m^-2, power
densities in W m^-2, voltages in V, temperatures in K.
"""
