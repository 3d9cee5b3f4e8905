"""What ``bhchem critical`` and ``bhchem exponents`` print.

JSON keys (a contract with external scripts): ``family``, ``parameters``,
``convention``, ``completeness``, ``method``, ``message``, ``critical_points``: a
list of {``T``, ``P``, ``v``, ``r``, ``G``, ``ratio``, ``kind``, ``physical``,
``scale_free``, ``residuals``, ``converged``, ``note``, ``nearby_system``, ...}; for ``exponents`` each point also has
``exponents`` {alpha, beta, gamma, delta} (exact, as fractions) and ``fitted``
(the same keys, each {value, uncertainty, fit_range, note}).  No critical point is
a result (an empty list), not an error.
"""
from __future__ import annotations

from .compiled import Thermodynamics
from .critical import find_critical_points


def critical_json(th: Thermodynamics, with_exponents: bool = False) -> dict:
    from .phases import takes_part_in_transition
    search = find_critical_points(th)
    points = []
    for cp in search.points:
        d = cp.to_dict()
        d["on_preferred_branch"] = takes_part_in_transition(th, cp)
        d["state_variable"] = th.derivation.state.name
        if with_exponents:
            if cp.kind == "degenerate" or not cp.physical or not cp.converged:
                why = ("degenerate" if cp.kind == "degenerate" else
                       "unphysical" if not cp.physical else "not converged")
                d["exponents"] = None
                d["fitted"] = None
                d["exponents_note"] = f"not computed: the point is {why}"
            else:
                from .exponents import critical_exponents
                ex = critical_exponents(th, cp)
                d["exponents"] = ex.exact
                d["fitted"] = ex.fitted
                d["series_coefficients"] = ex.coefficients
                d["exponents_agree"] = ex.agree
                d["exponents_note"] = ex.message
        points.append(d)
    return {"family": search.family, "parameters": search.parameters,
            "convention": search.convention, "completeness": search.completeness,
            "method": search.method, "scanned_range": search.scanned_range,
            "converged": search.converged, "message": search.message,
            "critical_points": points}


def _g(v) -> str:
    return "-" if v is None else f"{v:.12g}"


def critical_text(doc: dict) -> str:
    params = ", ".join(f"{k} = {v:g}" for k, v in doc["parameters"].items())
    lines = [f"{doc['family']} ({params})", f"  {doc['message']}", f"  method: {doc['method']}"]
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
            sf = "   ".join(f"{k} = {v:.12g}" for k, v in cp["scale_free"].items())
            lines.append(f"      scale-free: {sf}")
        res = ", ".join(f"{k} = {v:.1e}" for k, v in cp["residuals"].items())
        lines.append(f"      residuals: {res}")
        if cp["note"]:
            lines.append(f"      note: {cp['note']}")
        if "exponents" in cp:
            if cp["exponents"] is None:
                lines.append(f"      exponents: {cp['exponents_note']}")
                continue
            ex = cp["exponents"]
            lines.append("      exponents (exact):  " + "  ".join(
                f"{k} = {ex[k]}" for k in ("alpha", "beta", "gamma", "delta")))
            fit = []
            for k in ("alpha", "beta", "gamma", "delta"):
                f = cp["fitted"][k]
                fit.append(f"{k} = -" if f["value"] is None else
                           f"{k} = {f['value']:.5f} +- {f['uncertainty']:.1e}")
            lines.append("      exponents (fitted): " + "  ".join(fit))
            lines.append(f"      {cp['exponents_note']}")
    return "\n".join(lines)
