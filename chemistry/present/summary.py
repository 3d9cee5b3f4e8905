"""What ``bhchem show`` prints: derived quantities, equation of state, verdicts.

The JSON keys are a contract with external scripts: ``family``, ``parameters``
(name -> {value, dimension, domain}), ``convention``, ``quantities`` (name ->
{sympy, latex}), ``equation_of_state``, ``first_law`` {holds, max_residual, ...},
``smarr`` {holds, relation, missing, ...}, ``isoperimetric`` {R_min, R_max, n_states,
super_entropic, worst {x, P, R}, message, convention}: the reverse isoperimetric ratio over
random physical states at the given parameters (null fields for non-black-hole systems).
"""
from __future__ import annotations

import sympy as sp

from bhchem.core.checks import check_first_law, check_smarr
from bhchem.core.compiled import Thermodynamics
from bhchem.conventions import convention_record
from bhchem.analysis.isoperimetric import isoperimetric_survey

_LABELS = {
    "M": "enthalpy (mass)", "S": "entropy", "T": "temperature",
    "V": "thermodynamic volume (dM/dP)_S", "G": "Gibbs free energy M - T S",
    "v": "specific volume", "r_plus": "horizon radius", "C_P": "heat capacity at fixed P",
    "C_V": "heat capacity at fixed V", "kappa_T": "isothermal compressibility",
    "G_background": "Gibbs free energy of the background phase",
}


def _label(name: str) -> str:
    if name.startswith("Phi_"):
        return f"potential conjugate to {name[4:]}"
    return _LABELS.get(name, name)


def _dimension_text(p, dim) -> str:
    n = p.dimension_at(dim)
    if n == 0:
        return "dimensionless"
    return f"L^{int(n) if float(n).is_integer() else n}"


def show_json(th: Thermodynamics) -> dict:
    """The JSON document of ``bhchem show``."""
    der = th.derivation
    fam = th.family
    quantities = {name: {"sympy": sp.sstr(e), "latex": sp.latex(e), "meaning": _label(name)}
                  for name, e in der.quantities.items()}
    eos = der.eos
    eos_doc = {"form": eos.form,
               "sympy": sp.sstr(eos.pressure) if eos.pressure is not None else None,
               "latex": sp.latex(eos.pressure) if eos.pressure is not None else None,
               "variables": "P(T, v)" if eos.form == "closed" else f"T({der.state}, P), v({der.state})"}
    fl = check_first_law(th)
    sm = check_smarr(th)
    iso = isoperimetric_survey(th)
    return {
        "family": fam.name,
        "summary": fam.summary,
        "reference": fam.reference,
        "state_variable": {"symbol": der.state.name, "meaning": fam.state_description},
        "parameters": {p.name: {"value": th.values[p.name],
                                "dimension": _dimension_text(p, der.dimension),
                                "domain": p.domain.describe(p.name)}
                       for p in fam.all_parameters},
        "convention": convention_record(fam),
        "quantities": quantities,
        "equation_of_state": eos_doc,
        "notes": list(der.notes),
        "first_law": {"holds": fl.holds, "max_residual": fl.max_residual,
                      "finite_difference_residual": fl.finite_difference_residual,
                      "proved_symbolically": fl.proved, "n_points": fl.n_points,
                      "message": fl.message},
        "smarr": {"holds": sm.holds, "relation": sm.relation, "missing": sm.missing,
                  "max_residual": sm.max_residual, "n_points": sm.n_points,
                  "message": sm.message},
        "conditions": [{**rec, "active": rec["name"] in th.admissibility.active}
                       for rec in fam.condition_records()],
        "condition_sets": {name: {"members": list(cs.members), "description": cs.description,
                                  "reference": cs.reference}
                           for name, cs in fam.condition_set_table().items()},
        "admissibility": th.admissibility.to_dict(),
        "isoperimetric": {"R_min": iso.R_min, "R_max": iso.R_max, "n_states": iso.n_states,
                          "super_entropic": iso.super_entropic, "worst": iso.worst,
                          "message": iso.message, "convention": iso.convention},
        "ensemble": fam.ensemble_record(),
    }


def show_text(th: Thermodynamics) -> str:
    """The plain-text report of ``bhchem show``."""
    doc = show_json(th)
    der = th.derivation
    lines = [f"{doc['family']}: {doc['summary']}",
             f"  reference    {doc['reference']}",
             f"  state        {der.state.name} = {doc['state_variable']['meaning']}"]
    first = True
    for p in th.family.all_parameters:
        info = doc["parameters"][p.name]
        head = "  parameters   " if first else "               "
        first = False
        desc = f"  ({p.description})" if p.description else ""
        lines.append(f"{head}{p.name} = {info['value']:<8g} [{info['dimension']}; "
                     f"{info['domain']}]{desc}")
    conv = doc["convention"]
    lines.append(f"  conventions  {conv['units']}; {conv['pressure']}; {conv['mass']}; "
                 f"{conv['volume']}; {conv['specific_volume']}; {conv['charge']}")
    lines.append(f"  ensemble     {th.family.ensemble_label()}")
    for key, text in conv.items():
        if key.startswith("inverse_") or key == "legendre_transform":
            lines.append(f"               {text}")
    fixed = ", ".join(f"{k} = {v}" for k, v in der.discrete.items())
    free = ", ".join([der.state.name, "P"] + list(der.parameter_names))
    lines.append("")
    lines.append(f"Derived quantities (functions of {free}"
                 + (f"; {fixed} substituted)" if fixed else ")"))
    for name, q in doc["quantities"].items():
        lines.append(f"  {name:<13}= {q['sympy']}")
        lines.append(f"  {'':<13}  latex: {q['latex']}")
        lines.append(f"  {'':<13}  ({q['meaning']})")
    for note in doc["notes"]:
        lines.append(f"  note: {note}")
    eos = doc["equation_of_state"]
    lines.append("")
    if eos["sympy"]:
        lines.append(f"Equation of state ({eos['form']}, {eos['variables']})")
        lines.append(f"  P = {eos['sympy']}")
        lines.append(f"      latex: {eos['latex']}")
    else:
        lines.append(f"Equation of state (parametric: {eos['variables']}; T is not linear in P)")
    lines.append("")
    lines.append(f"First law    {doc['first_law']['message']}")
    lines.append(f"Smarr        {doc['smarr']['message']}")
    iso = doc["isoperimetric"]
    lines.append(f"Isoperimetric {iso['message']}"
                 + ("" if iso["R_min"] is None else
                    " [reverse isoperimetric ratio R; R < 1: super-entropic]"))
    lines.append("")
    lines.append(f"Which states count ({th.admissibility.label()}; a state must satisfy every "
                 f"condition marked *)")
    for rec in doc["conditions"]:
        mark = "*" if rec["active"] else "-"
        lines.append(f"  {mark} {rec['name']}: {_short(rec['relation'])}")
        lines.append(f"      why: {rec['reason']}")
        lines.append(f"      source: {rec['reference']}")
    lines.append("  condition sets (choose with --conditions SET, drop one with --without NAME):")
    for name, cs in doc["condition_sets"].items():
        lines.append(f"    {name}: {', '.join(cs['members']) or 'none'}")
        if name != "default":
            lines.append(f"      {cs['description']} ({cs['reference']})")
    return "\n".join(lines)


def _short(text: str, limit: int = 100) -> str:
    """A relation in one line; a generated one (hundreds of characters) is cut with a note."""
    return text if len(text) <= limit else text[:limit] + " ... (see --json)"
