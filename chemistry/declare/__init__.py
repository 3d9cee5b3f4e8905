"""Declaration layer: families as data (Family, Parameter, Domain), the canonical symbols,
the declarative file format with its safe expression parser, and the registry.

A family module imports from here and from nothing else in bhchem.
"""
from bhchem.declare.domain import Domain
from bhchem.declare.family import Family, Parameter
from bhchem.declare.metric import Metric, from_metric

__all__ = ["Domain", "Family", "Metric", "Parameter", "from_metric"]
