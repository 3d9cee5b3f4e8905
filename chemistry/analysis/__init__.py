"""Analysis layer: critical points, exponents, isobars, coexistence, phase diagrams and the
phase graph, response functions, Joule-Thomson expansion, heat engines, curvature.

Every analysis takes a bound family (:class:`bhchem.core.compiled.Thermodynamics`) and
returns a frozen result object with residuals or a convergence flag.  Nothing here
prints, draws or parses command-line text (that is ``present`` and ``cli``)."""
