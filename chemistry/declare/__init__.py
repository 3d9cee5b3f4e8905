"""Declaration layer: families as data (Family, Parameter, Domain), the canonical symbols,
the declarative file format with its safe expression parser, and the registry.

A family module imports from here and from nothing else in bhchem.
"""
from bhchem.declare.conditions import Condition, ConditionSet
from bhchem.declare.domain import Domain
from bhchem.declare.family import Family, Parameter
from bhchem.declare.metric import Metric, from_metric

__all__ = ["Condition", "ConditionSet", "Domain", "Family", "Metric", "Parameter", "from_metric"]
