"""bhchem: black hole chemistry in the extended phase space.

Layers (imports only go down; ``tests/test_layering.py`` holds the contract):

=============  =============================================================
``cli``        the ``bhchem`` command: parses arguments, calls workflows and analyses
``workflows``  orchestration: report bundles, figures (``make_figure``), the demo, the atlas
``present``    JSON/text/LaTeX serialisation and figures: formats and draws what it is given
``analysis``   critical points, exponents, isobars, coexistence, phase diagrams,
               response, expansion, engines, curvature, the curves of each figure
               (``figure_data``): frozen result objects only
``numerics``   shared numerical kernels (sign changes and brackets, isotherm pressure)
``core``       derivation (sympy), compiled numerics (numpy), first-law/Smarr checks
``declare``    families as data: Family, Parameter, Domain, symbols, file formats, registry
base           ``errors``, ``conventions``, ``fileio``
=============  =============================================================

Conventions: G = c = hbar = k_B = 1; P = -Lambda/(8 pi) = (d-1)(d-2)/(16 pi L^2);
M is the enthalpy; V = (dM/dP)_{S,q}; v = 4 r+/(d-2); G = M - T S.

Examples
--------
The 4D charged AdS black hole has one critical point, T_c = sqrt(6)/(18 pi Q) and
P_c = 1/(96 pi Q^2) (Kubiznak & Mann, JHEP 07 (2012) 033):

>>> import math, bhchem
>>> th = bhchem.bind("rn-ads", Q=1.0)
>>> (cp,) = bhchem.find_critical_points(th).physical
>>> abs(cp.T * 18 * math.pi / math.sqrt(6) - 1) < 1e-12, abs(cp.P * 96 * math.pi - 1) < 1e-12
(True, True)
"""
from bhchem.errors import (BhchemError, BhchemWarning, DuplicateFamilyError, FamilyFileReloaded,
                           InconsistentFamilyWarning, InvalidArgumentError, ResidualBoundWarning,
                           MalformedFamilyError, ParameterDomainError, StateDomainError,
                           UnknownFamilyError, UnknownParameterError)
from bhchem.declare.domain import Domain
from bhchem.declare.family import Family, Parameter
from bhchem.declare.conditions import Admissibility, Condition, ConditionSet
from bhchem.declare.metric import Metric, from_metric
from bhchem.declare.registry import (available_families, get_family, load_family_file,
                                     register)
from bhchem.core.derive import Derivation, derive
from bhchem.core.compiled import State, Thermodynamics, bind
from bhchem.core.ensemble import EnsembleError, fixed_potential_family
from bhchem.core.checks import FirstLawResult, SmarrResult, check_first_law, check_smarr
from bhchem.analysis.critical import (CriticalPoint, CriticalSearch, find_critical_points,
                                      resolve_pressure, resolve_temperature)
from bhchem.analysis.critical_branch import find_critical_points_on_branches
from bhchem.analysis.critical_scan import CriticalScan, critical_scan
from bhchem.analysis.exponents import ExponentResult, critical_exponents, exact_exponents
from bhchem.analysis.isobar import IsobarResult, Transition, analyze_isobar
from bhchem.analysis.admissibility import (ExcludedRange, Exclusions, ExclusionSummary,
                                           excluded_states, exclusion_summary)
from bhchem.analysis.topology import (CriticalCharge, TopologyResult, critical_point_charge,
                                      thermodynamic_topology)
from bhchem.analysis.landscape import FirstPassage, Landscape, first_passage, free_energy_landscape
from bhchem.analysis.isoperimetric import (IsoperimetricSurvey, isoperimetric_ratio,
                                           isoperimetric_survey)
from bhchem.analysis.coexistence_line import CoexistenceCurve, coexistence_curve
from bhchem.analysis.phases import PhaseDiagram, PhaseLine, TriplePoint, phase_diagram
from bhchem.analysis.metric_route import (MetricDiagnosis, PhotonJumps, PhotonSphere,
                                          RouteComparison, compare_routes, diagnose_metric,
                                          diagram_photon_jumps, photon_sphere,
                                          photon_sphere_jumps)
from bhchem.analysis.figure_data import (CpCurves, GtCurves, OverlayData, PtDiagram, PvCurves,
                                         TrCurves, cp_curves, gt_curves, overlay_data,
                                         pt_diagram, pv_curves, tr_curves)
from bhchem.analysis.figure_data import reduced as reduced_units
from bhchem.present.progress import Progress, progress_display
from bhchem.present.plots import (EmptyFigureError, FigureTable, PlotResult, adjust, plot_cp,
                                  plot_gt, plot_overlay, plot_pt, plot_pv, plot_tr, save)
from bhchem.analysis.ensembles import EnsembleComparison, EnsembleSide, compare_ensembles
from bhchem.workflows.figures import compare_figure, make_figure

from bhchem.version import __version__

__all__ = [
    # declaring families
    "Domain", "Family", "Parameter", "available_families", "get_family",
    "load_family_file", "register", "Metric", "from_metric",
    # which states count
    "Condition", "ConditionSet", "Admissibility",
    "ExcludedRange", "Exclusions", "ExclusionSummary", "excluded_states", "exclusion_summary",
    # thermodynamic topology, the free-energy landscape, the isoperimetric ratio
    "CriticalCharge", "TopologyResult", "critical_point_charge", "thermodynamic_topology",
    "FirstPassage", "Landscape", "first_passage", "free_energy_landscape",
    "IsoperimetricSurvey", "isoperimetric_ratio", "isoperimetric_survey",
    # derivation and checks
    "Derivation", "derive", "State", "Thermodynamics", "bind",
    # ensembles: a potential held fixed instead of its charge (bind(..., Phi_Q=0.5))
    "fixed_potential_family", "EnsembleError",
    "EnsembleComparison", "EnsembleSide", "compare_ensembles", "compare_figure",
    "FirstLawResult", "SmarrResult", "check_first_law", "check_smarr",
    # analyses and their results
    "CriticalPoint", "CriticalSearch", "find_critical_points", "find_critical_points_on_branches",
    "resolve_pressure", "resolve_temperature",
    "CriticalScan", "critical_scan",
    "ExponentResult", "critical_exponents", "exact_exponents",
    "IsobarResult", "Transition", "analyze_isobar",
    "CoexistenceCurve", "coexistence_curve",
    "PhaseDiagram", "PhaseLine", "TriplePoint", "phase_diagram",
    "MetricDiagnosis", "PhotonJumps", "PhotonSphere", "RouteComparison", "compare_routes",
    "diagnose_metric", "diagram_photon_jumps", "photon_sphere", "photon_sphere_jumps",
    # figures: the data of each kind (analysis), drawing it (presentation), both at once
    "CpCurves", "GtCurves", "PtDiagram", "PvCurves", "TrCurves",
    "cp_curves", "gt_curves", "pt_diagram", "pv_curves", "tr_curves",
    "EmptyFigureError", "PlotResult", "plot_cp", "plot_gt", "plot_pt", "plot_pv",
    "plot_tr", "save", "make_figure", "Progress", "progress_display",
    # overlays over a parameter, reduced variables, axis ranges and width, the data table
    "OverlayData", "overlay_data", "plot_overlay", "reduced_units", "adjust", "FigureTable",
    # errors
    "BhchemError", "BhchemWarning", "DuplicateFamilyError", "FamilyFileReloaded",
    "InconsistentFamilyWarning", "InvalidArgumentError", "ResidualBoundWarning", "MalformedFamilyError",
    "ParameterDomainError", "StateDomainError", "UnknownFamilyError",
    "UnknownParameterError",
    "__version__",
]
