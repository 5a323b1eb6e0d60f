"""The semiclassical picture: estimates of a pulse (Up, Keldysh parameter, cutoff, grid
advice), the three-step model on a sampled field and the quasi-static tunnelling yield.
Pure numerics in Hartree atomic units.
"""
