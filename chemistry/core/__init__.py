"""Core layer: the symbolic derivation of a family (sympy), its compiled numerics (numpy),
the first-law and Smarr checks, and random physical states.  Imports only ``declare``
and the base modules."""
