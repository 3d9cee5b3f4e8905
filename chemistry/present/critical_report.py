"""What ``bhchem critical`` and ``bhchem exponents`` print.

JSON keys (a contract with external scripts): ``family``, ``parameters``,
``convention``, ``completeness``, ``method``, ``message``, ``critical_points``: a
list of {``T``, ``P``, ``v``, ``r``, ``G``, ``ratio``, ``kind``, ``physical``,
``scale_free``, ``residuals``, ``converged``, ``note``, ``nearby_system``,
``topological_charge`` {``charge`` (contour integral), ``sign_formula``, ``agree``,
``kind`` ('conventional' -1 | 'novel' +1 | None), ``note``}, ...}; the top-level
``topological_charge`` {``total`` (sum over the physical points with a charge),
``convention``}; for ``exponents`` each point also has
``exponents`` {alpha, beta, gamma, delta} (exact, as fractions) and ``fitted``
(the same keys, each {value, uncertainty, fit_range, note}); ``critical_polynomial``
{``variable``, ``expression``, ``factored``, ``factors`` ([text, multiplicity] pairs),
``scale_free`` (symbol -> the combination it stands for), ``available``, ``rationalised``,
``message``} from :func:`bhchem.analysis.critical_polynomial.critical_polynomial` (with
``available`` false and the reason in ``message`` when the family has no polynomial form).
No critical point is a result (an empty list), not an error.
"""
from __future__ import annotations

import math

from bhchem.core.compiled import Thermodynamics
from bhchem.analysis.critical_branch import find_critical_points_on_branches
from bhchem.analysis.critical_polynomial import critical_polynomial
from bhchem.present.report_text import EXPONENT_DEFINITIONS
from bhchem.analysis.exponents import critical_exponents
from bhchem.analysis.topology import CONVENTION as TOPOLOGY_CONVENTION
from bhchem.declare.conditions import Admissibility


def admissibility_line(record: dict) -> str:
    """``states: default conditions (4 applied)`` or the non-default selection."""
    adm = Admissibility.from_dict(record)
    return f"states: {adm.label()} ({len(adm.active)} applied)"


def ensemble_line(record: dict) -> str:
    """``ensemble: fixed P, Q (as declared)`` (the variables the analysis holds fixed)."""
    return f"ensemble: {record.get('label', 'as declared')}" if record else \
        "ensemble: as declared"


def critical_json(th: Thermodynamics, with_exponents: bool = False) -> dict:
    """The JSON document of ``bhchem critical`` / ``exponents``.

    ``on_preferred_branch`` comes from the analysis itself
    (``find_critical_points_on_branches(th)``), so the Python API and the JSON
    carry the same flag.
    """
    search = find_critical_points_on_branches(th)
    points = []
    for cp in search.points:
        d = cp.to_dict()
        d["state_variable"] = th.derivation.state.name
        if with_exponents:
            if cp.kind == "degenerate" or not cp.physical or not cp.converged:
                why = ("degenerate" if cp.kind == "degenerate" else
                       "unphysical" if not cp.physical else "not converged")
                d["exponents"] = None
                d["fitted"] = None
                d["exponents_note"] = f"not computed: the point is {why}"
            else:
                ex = critical_exponents(th, cp)
                d["exponents"] = ex.exact
                d["fitted"] = ex.fitted
                d["series_coefficients"] = ex.coefficients
                d["exponents_agree"] = ex.agree
                d["exponents_note"] = ex.message
        points.append(d)
    charges = [cp.topological_charge.charge for cp in search.physical
               if cp.topological_charge is not None and cp.topological_charge.charge is not None]
    total = {"total": sum(charges) if charges else None,
             "n_points": len(charges),
             "convention": TOPOLOGY_CONVENTION["critical_charge"]}
    return {"family": search.family, "parameters": search.parameters,
            "topological_charge": total,
            "convention": search.convention, "completeness": search.completeness,
            "method": search.method, "scanned_range": search.scanned_range,
            "converged": search.converged, "message": search.message,
            "critical_points": points, "warnings": list(search.warnings),
            "admissibility": search.admissibility, "ensemble": search.ensemble,
            "critical_polynomial": critical_polynomial(th).to_dict()}


def polynomial_line(poly: dict) -> str:
    """``critical polynomial in r^2: 7*a + y**3 - 6*y**2 = 0 (y stands for (r/Q)^2, a for
    a/Q^2)``, one line, factored; or ``critical polynomial: no polynomial form (...)``."""
    if not poly.get("available"):
        return f"critical polynomial: {poly.get('message', 'no polynomial form')}"
    pairs = sorted(((k, v) for k, v in poly["scale_free"].items() if k != v),
                   key=lambda kv: kv[0] != "y")
    sf = ", ".join(f"{k} {'stands for ' if i == 0 else 'for '}{v}"
                   for i, (k, v) in enumerate(pairs))
    extra = "; rationalised" if poly.get("rationalised") else ""
    return (f"critical polynomial in {poly['variable']}: {poly['factored']} = 0"
            + (f" ({sf}{extra})" if sf or extra else ""))


def _finite(v) -> bool:
    return v is not None and math.isfinite(v)


def _g(v) -> str:
    return f"{v:.12g}" if _finite(v) else "-"


def critical_text(doc: dict) -> str:
    params = ", ".join(f"{k} = {v:g}" for k, v in doc["parameters"].items())
    lines = [f"{doc['family']} ({params})", f"  {doc['message']}", f"  method: {doc['method']}",
             f"  {admissibility_line(doc.get('admissibility') or {})}",
             f"  {ensemble_line(doc.get('ensemble') or {})}"]
    if not doc["critical_points"]:
        lines.append("  no critical point")
    for i, cp in enumerate(doc["critical_points"], 1):
        flag = "physical" if cp["physical"] else "UNPHYSICAL"
        if cp.get("on_preferred_branch") is not None:
            flag += ", on the globally preferred branch" if cp["on_preferred_branch"] else \
                ", NOT on the globally preferred branch (no transition ends here)"
        label = f"{cp['kind']}, {flag}"
        if cp["kind"] == "degenerate":
            label = f"degenerate (no loop forms: not a critical point), state {flag}"
        if not cp["converged"]:
            label = f"NOT CONVERGED (residuals above the bound): {label}"
        lines.append(f"  [{i}] {label}")
        lines.append(f"      T_c = {_g(cp['T'])}   P_c = {_g(cp['P'])}   v_c = {_g(cp['v'])}")
        state = "" if cp["state_variable"] == "r" else f"{cp['state_variable']}_c = {_g(cp['x'])}   "
        lines.append(f"      {state}r_c = {_g(cp['r'])}   "
                     f"G_c = {_g(cp['G'])}   P_c v_c / T_c = {_g(cp['ratio'])}")
        if cp["scale_free"]:
            sf = "   ".join(f"{k} = {_g(v)}" for k, v in cp["scale_free"].items())
            lines.append(f"      scale-free: {sf}")
        res = ", ".join(f"{k} = {v:.1e}" if _finite(v) else f"{k} = not computed"
                        for k, v in cp["residuals"].items())
        lines.append(f"      residuals: {res}")
        tc = cp.get("topological_charge")
        if tc:
            if tc["charge"] is None:
                lines.append(f"      topological charge: {tc['note']}")
            else:
                both = ("contour integral and sign formula agree" if tc["agree"] else
                        "contour integral only: the sign formula is silent here"
                        if tc["sign_formula"] is None else
                        f"DISAGREES with the sign formula ({tc['sign_formula']})")
                q = tc["charge"]
                lines.append(f"      topological charge {q if q == 0 else format(q, '+d')} "
                             f"({tc['kind']}; {both})")
        if cp["note"]:
            lines.append(f"      note: {cp['note']}")
        if "exponents" in cp:
            if cp["exponents"] is None:
                lines.append(f"      exponents: {cp['exponents_note']}")
                continue
            ex = cp["exponents"]
            lines.append("      critical exponents (t = T/T_c - 1), exact and fitted:")
            for k in ("alpha", "beta", "gamma", "delta"):
                f = cp["fitted"][k]
                if not _finite(f["value"]):
                    fitted = f"not fitted ({f['note']})" if f.get("note") else "not fitted"
                elif not _finite(f["uncertainty"]):
                    fitted = f"{f['value']:.5f}"
                else:
                    fitted = f"{f['value']:.5f} +- {f['uncertainty']:.1e}"
                head = f"exponent {k} ({EXPONENT_DEFINITIONS[k]})"
                lines.append(f"        {head:<50} exact {ex[k] or '-':<5} fitted {fitted}")
            lines.append(f"      {cp['exponents_note']}")
    poly = doc.get("critical_polynomial")
    if poly:
        lines.append(f"  {polynomial_line(poly)}")
    tot = doc.get("topological_charge")
    if tot and tot["total"] is not None:
        lines.append(f"  total topological charge of the physical critical points: "
                     f"{tot['total'] if tot['total'] == 0 else format(tot['total'], '+d')} (Wei & Liu 2022: conventional -1, novel +1)")
    for w in doc.get("warnings", ()):
        lines.append(f"  WARNING: {w}")
    return "\n".join(lines)
