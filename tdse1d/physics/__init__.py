"""The physics of a run on a 1-D grid: the grid and its FFT plans, the fused kernels,
model potentials, laser pulses, absorbers, bound states, the split-operator
propagation and the ionization read-off. Pure numerics in Hartree atomic units: nothing
here reads or writes a file or prints.
"""
