#!/usr/bin/env python3
"""Generate Rimehold's refrigerant saturation data from CoolProp.

Writes
  shared/refrigerants/data.generated.ts          (committed; read by shared/refrigerants/index.ts)
  tests/shared/fixtures/refrigerant-reference.json (committed; off-grid CoolProp values for tests,
                                                     hot-day bubble points at 55 and 60 degC, critical points)

Needs CoolProp 8.0.0 (`pip install CoolProp==8.0.0`). CoolProp is needed only to regenerate the
data, never at test, CI or run time. Run from the repository root: `npm run gen:refrigerants`.

Method
- Every refrigerant gets one uniform temperature grid (step <= 1 K) from its minimum to its maximum
  valid temperature. The maximum is a few K below the critical point (pure fluids, checked against
  CoolProp's critical temperature) or at least 2 K below the highest temperature at which CoolProp's
  mixture model converges (blends, BLEND_CONVERGED_C), so the whole subcritical range is covered.
  Every segment mid-point is checked against CoolProp with the same cubic Hermite interpolation the
  engine uses (MIDPOINT_TOLERANCE_K); the printed "mid-point error" is the worst. A 1 K grid keeps that
  below 0.0002 K even 0.08 K from CO2's critical point, so no coarser high-temperature grid is used
  (file size 43.8 kB for -60..+50 degC, 58.6 kB for the full subcritical range). On that grid CoolProp gives the saturation pressure on the dew curve (Q=1) and
  on the bubble curve (Q=0). We store ln(P / kPa) as integers in millionths (fixed point), which
  keeps the file small and adds at most ~3e-5 K of error.
- Blends use CoolProp's predefined mixture models (`HEOS::<name>.mix`, full multi-component
  Helmholtz mixtures with dew/bubble split). Where CoolProp's default saturation solver does not
  converge on a grid point (R-410A between about 41 and 47 degC), the state is re-solved with the
  neighbouring converged state as the initial guess (`update_with_guesses`); the result is checked
  for smoothness below.
- GWP: IPCC AR4 100-year values. Single substances carry the AR4 figure; HFC blends are the
  mass-fraction-weighted sum of component AR4 figures (the method of the EU F-gas Regulation
  517/2014 Annex IV and of US EPA listings), using ASHRAE 34 nominal compositions. The component
  figures below are from memory; the generator checks the HFC/HCFC ones against CoolProp's own
  GWP100 field and stops if they differ.
"""
from __future__ import annotations

import json
import math
import os
import random
import sys

import CoolProp
import CoolProp.CoolProp as CP

EXPECTED_COOLPROP = "8.0.0"
GRID_STEP_MAX_K = 1.0
LNP_SCALE = 1_000_000  # ln(P/kPa) stored in millionths
GLIDE_AT_DEW_C = -10.0
ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
DATA_OUT = os.path.join(ROOT, "shared", "refrigerants", "data.generated.ts")
FIXTURE_OUT = os.path.join(ROOT, "tests", "shared", "fixtures", "refrigerant-reference.json")

# IPCC AR4 WG1 (2007) Table 2.14, 100-year GWP (from memory); HFO values as listed in
# EU Regulation 517/2014 Annex II (from memory); hydrocarbons as in its Annex IV (from memory).
COMPONENT_GWP_AR4 = {
    "R32": 675, "R125": 3500, "R134a": 1430, "R143a": 4470, "R22": 1810,
    "R1234yf": 4, "R1234ze(E)": 7, "CarbonDioxide": 1, "n-Propane": 3, "IsoButane": 3,
}
# Components whose AR4 figure CoolProp 8.0.0 also carries as GWP100 (checked at run time).
CHECK_AGAINST_COOLPROP = ["R32", "R125", "R134a", "R143a", "R22", "R1234yf", "CarbonDioxide", "n-Propane"]

AR4_NOTE = "IPCC AR4 100-yr (from memory; matches CoolProp 8.0.0 GWP100)"
BLEND_NOTE = ("IPCC AR4 100-yr, mass-weighted from ASHRAE 34 composition and component AR4 values "
              "(EU 517/2014 Annex IV method; component values from memory, HFC values match CoolProp 8.0.0 GWP100)")

# id, CoolProp fluid, name, ASHRAE 34 safety class (from memory), kind, nominal mass % (blends),
# min and max valid temperature in degC.
# Upper ends (whole subcritical range, so hot-day condensing at 55-60 degC is inside the tables):
# - pure fluids: about 3 K below CoolProp 8.0.0's critical temperature (checked at run time, see
#   PURE_MARGIN_K); R-744 goes to 30.9 degC, 0.08 K below its 30.978 degC critical point, so 29-31 degC
#   is covered up to where saturation ends.
# - blends: CoolProp's mixture model, marched upwards in 0.5 K steps from 30 degC with the previous
#   state as the initial guess, converges on both curves up to BLEND_CONVERGED_C (dew, bubble; found
#   with this generator's Solver on 2026-12-03); the tables stop at least 2 K below the lower of the
#   two. Above that the solver fails or falls onto the trivial solution (liquid = vapour).
REFRIGERANTS = [
    ("R-404A", "R404A.mix", "R-125/143a/134a (44/52/4)", "A1", "near-azeotrope",
     {"R125": 44, "R143a": 52, "R134a": 4}, -60.0, 67.0),
    ("R-507A", "R507A.mix", "R-125/143a (50/50)", "A1", "azeotrope", {"R125": 50, "R143a": 50}, -60.0, 66.0),
    ("R-448A", "R448A.mix", "R-32/125/1234yf/134a/1234ze(E) (26/26/20/21/7)", "A1", "zeotrope",
     {"R32": 26, "R125": 26, "R1234yf": 20, "R134a": 21, "R1234ze(E)": 7}, -60.0, 78.0),
    ("R-449A", "R449A.mix", "R-32/125/1234yf/134a (24.3/24.7/25.3/25.7)", "A1", "zeotrope",
     {"R32": 24.3, "R125": 24.7, "R1234yf": 25.3, "R134a": 25.7}, -60.0, 78.0),
    ("R-407A", "R407A.mix", "R-32/125/134a (20/40/40)", "A1", "zeotrope",
     {"R32": 20, "R125": 40, "R134a": 40}, -60.0, 78.0),
    ("R-407C", "R407C.mix", "R-32/125/134a (23/25/52)", "A1", "zeotrope",
     {"R32": 23, "R125": 25, "R134a": 52}, -60.0, 82.0),
    ("R-452A", "R452A.mix", "R-32/125/1234yf (11/59/30)", "A1", "zeotrope",
     {"R32": 11, "R125": 59, "R1234yf": 30}, -60.0, 70.0),
    ("R-134a", "R134a", "1,1,1,2-tetrafluoroethane", "A1", "pure", None, -60.0, 98.0),
    ("R-513A", "R513A.mix", "R-1234yf/134a (56/44)", "A1", "azeotrope", {"R1234yf": 56, "R134a": 44}, -60.0, 91.0),
    ("R-22", "R22", "chlorodifluoromethane", "A1", "pure", None, -60.0, 93.0),
    ("R-410A", "R410A.mix", "R-32/125 (50/50)", "A1", "near-azeotrope", {"R32": 50, "R125": 50}, -60.0, 66.0),
    ("R-32", "R32", "difluoromethane", "A2L", "pure", None, -60.0, 75.0),
    ("R-454C", "R454C.mix", "R-32/1234yf (21.5/78.5)", "A2L", "zeotrope", {"R32": 21.5, "R1234yf": 78.5}, -60.0, 84.0),
    ("R-455A", "R455A.mix", "R-744/32/1234yf (3/21.5/75.5)", "A2L", "zeotrope",
     {"CarbonDioxide": 3, "R32": 21.5, "R1234yf": 75.5}, -60.0, 81.0),
    ("R-290", "n-Propane", "propane", "A3", "pure", None, -60.0, 93.5),
    ("R-600a", "IsoButane", "isobutane", "A3", "pure", None, -60.0, 131.5),
    # Just above the triple point (-56.558 degC in CoolProp): below it there is no liquid.
    ("R-744", "CarbonDioxide", "carbon dioxide", "A1", "pure", None, -56.55, 30.9),
    ("R-717", "Ammonia", "ammonia", "B2L", "pure", None, -60.0, 129.0),
    ("R-1234yf", "R1234yf", "2,3,3,3-tetrafluoropropene", "A2L", "pure", None, -60.0, 91.5),
]

# Where CoolProp 8.0.0's mixture model was found to converge (dew, bubble), degC: see above.
BLEND_CONVERGED_C = {
    "R-404A": (69.5, 69.5), "R-507A": (68.0, 68.5), "R-448A": (81.5, 80.5), "R-449A": (81.0, 80.0),
    "R-407A": (81.0, 80.0), "R-407C": (85.0, 84.0), "R-452A": (73.5, 72.5), "R-513A": (93.0, 93.0),
    "R-410A": (68.5, 68.5), "R-454C": (86.5, 86.0), "R-455A": (84.5, 84.0),
}
BLEND_MARGIN_K = 2.0
# Pure fluids: the table ends between 0.05 and 3.5 K below the critical temperature.
PURE_MARGIN_K = (0.05, 3.5)
# Interpolation accuracy required of the stored grid at segment mid-points, K (checked against CoolProp).
MIDPOINT_TOLERANCE_K = 0.002
# Condensing temperatures of the hot-day subcooling check values in the fixture, degC.
HOT_DAY_CONDENSING_C = (55.0, 60.0)
HOT_DAY_REFRIGERANTS = ("R-404A", "R-448A", "R-134a")

SINGLE_GWP = {
    "R-134a": (1430, AR4_NOTE), "R-22": (1810, AR4_NOTE), "R-32": (675, AR4_NOTE),
    "R-1234yf": (4, "EU 517/2014 Annex II (from memory; matches CoolProp 8.0.0 GWP100)"),
    "R-290": (3, "EU 517/2014 Annex IV (from memory; matches CoolProp 8.0.0 GWP100)"),
    "R-600a": (3, "EU 517/2014 Annex IV (from memory)"),
    "R-744": (1, "reference gas of the GWP scale (IPCC AR4)"),
    "R-717": (0, "not a greenhouse gas in IPCC AR4; listed as 0 (from memory)"),
}


def fail(msg: str) -> None:
    print("gen_refrigerants: " + msg, file=sys.stderr)
    sys.exit(1)


class Solver:
    """Saturation solver for one CoolProp fluid with a continuation fallback."""

    def __init__(self, fluid: str):
        self.state = CoolProp.AbstractState("HEOS", fluid)
        self.fluid = fluid
        self.fallbacks = 0

    def _snapshot(self) -> dict:
        s = self.state
        return {
            "T": s.T(), "p": s.p(),
            "rl": s.saturated_liquid_keyed_output(CP.iDmolar), "rv": s.saturated_vapor_keyed_output(CP.iDmolar),
            "x": list(s.mole_fractions_liquid()), "y": list(s.mole_fractions_vapor()),
        }

    def solve(self, inputs: int, q: float, value: float, guess: dict | None) -> dict:
        """Solve the saturation state; returns a snapshot (T in K, p in Pa)."""
        try:
            if inputs == CP.QT_INPUTS:
                self.state.update(CP.QT_INPUTS, q, value)
            else:
                self.state.update(CP.PQ_INPUTS, value, q)
            snap = self._snapshot()
            if math.isfinite(snap["p"]) and math.isfinite(snap["T"]):
                return snap
        except ValueError:
            pass
        if guess is None:
            raise ValueError(f"{self.fluid}: no convergence at {value} and no guess")
        g = CP.PyGuessesStructure()
        g.T = value if inputs == CP.QT_INPUTS else guess["T"]
        g.p = value if inputs == CP.PQ_INPUTS else guess["p"]
        g.rhomolar_liq, g.rhomolar_vap = guess["rl"], guess["rv"]
        g.x, g.y = guess["x"], guess["y"]
        if inputs == CP.QT_INPUTS:
            self.state.update_with_guesses(CP.QT_INPUTS, q, value, g)
        else:
            self.state.update_with_guesses(CP.PQ_INPUTS, value, q, g)
        self.fallbacks += 1
        return self._snapshot()


def grid(min_c: float, max_c: float) -> list[float]:
    n = math.ceil((max_c - min_c) / GRID_STEP_MAX_K - 1e-9)
    h = (max_c - min_c) / n
    return [min_c + i * h for i in range(n)] + [max_c]


def curve_on_grid(solver: Solver, q: float, temps_c: list[float]) -> list[dict]:
    states: list[dict] = []
    for t in temps_c:
        states.append(solver.solve(CP.QT_INPUTS, q, t + 273.15, states[-1] if states else None))
    return states


def check_smooth(rid: str, curve: str, ln_p: list[float]) -> None:
    # Fourth differences of a smooth ln P(T) on a 1 K grid are ~1e-7 at low temperature and grow to
    # ~1e-5..1e-4 within a few K of the critical point; a wrong root shows up as a kink of 1e-3 or more.
    # (Interpolation accuracy itself is checked at every mid-point by check_midpoints.)
    worst = max(abs(ln_p[i] - 4 * ln_p[i + 1] + 6 * ln_p[i + 2] - 4 * ln_p[i + 3] + ln_p[i + 4])
                for i in range(len(ln_p) - 4))
    if worst > 3e-4:
        fail(f"{rid} {curve}: table not smooth (4th difference {worst:.2e})")
    if any(b <= a for a, b in zip(ln_p, ln_p[1:])):
        fail(f"{rid} {curve}: pressure not strictly increasing")


def hermite_slopes(y: list[float], h: float) -> list[float]:
    """dy/dx at each node, fourth-order differences: the same formulas as shared/refrigerants/index.ts."""
    n = len(y)
    m = [0.0] * n
    for i in range(n):
        if 2 <= i <= n - 3:
            m[i] = (y[i - 2] - 8 * y[i - 1] + 8 * y[i + 1] - y[i + 2]) / (12 * h)
        elif i == 0:
            m[i] = (-25 * y[0] + 48 * y[1] - 36 * y[2] + 16 * y[3] - 3 * y[4]) / (12 * h)
        elif i == 1:
            m[i] = (-3 * y[0] - 10 * y[1] + 18 * y[2] - 6 * y[3] + y[4]) / (12 * h)
        elif i == n - 1:
            m[i] = (25 * y[n - 1] - 48 * y[n - 2] + 36 * y[n - 3] - 16 * y[n - 4] + 3 * y[n - 5]) / (12 * h)
        else:
            m[i] = (3 * y[n - 1] + 10 * y[n - 2] - 18 * y[n - 3] + 6 * y[n - 4] - y[n - 5]) / (12 * h)
    return m


def check_midpoints(rid: str, curve: str, solver: Solver, q: float, temps: list[float],
                    states: list[dict], lnp_micro: list[int]) -> float:
    """Worst interpolation error, K, of the stored table at every segment mid-point against CoolProp."""
    h = temps[1] - temps[0]
    y = [v / LNP_SCALE for v in lnp_micro]
    m = hermite_slopes(y, h)
    worst = 0.0
    for i in range(len(temps) - 1):
        # Hermite cubic at s = 1/2: (y0 + y1)/2 + h (m0 - m1)/8
        interp = 0.5 * (y[i] + y[i + 1]) + h * (m[i] - m[i + 1]) / 8
        exact = math.log(solver.solve(CP.QT_INPUTS, q, temps[i] + h / 2 + 273.15, states[i])["p"] / 1000.0)
        slope = (y[i + 1] - y[i]) / h
        worst = max(worst, abs(interp - exact) / slope)
    if worst > MIDPOINT_TOLERANCE_K:
        fail(f"{rid} {curve}: interpolation error {worst:.4f} K at a mid-point exceeds {MIDPOINT_TOLERANCE_K} K")
    return worst


def upper_limit(rid: str, fluid: str, comp: dict | None, max_c: float) -> tuple[float | None, float | None, str]:
    """Critical point (degC, kPa abs; pure fluids only) and a sentence on where the table ends."""
    if comp is None:
        st = CoolProp.AbstractState("HEOS", fluid)
        tc = st.T_critical() - 273.15
        pc = st.p_critical() / 1000.0
        below = tc - max_c
        if not (PURE_MARGIN_K[0] <= below <= PURE_MARGIN_K[1]):
            fail(f"{rid}: table ends {below:.2f} K below the critical point, outside {PURE_MARGIN_K}")
        return tc, pc, (f"ends {below:.2f} K below the critical point ({tc:.2f} °C, {pc:.1f} kPa abs, "
                        f"CoolProp {CoolProp.__version__})")
    dew_c, bub_c = BLEND_CONVERGED_C[rid]
    if max_c > min(dew_c, bub_c) - BLEND_MARGIN_K + 1e-9:
        fail(f"{rid}: table max {max_c} degC is closer than {BLEND_MARGIN_K} K to where the mixture model converges")
    return None, None, (f"ends {min(dew_c, bub_c) - max_c:.1f} K below the highest temperature at which CoolProp "
                        f"{CoolProp.__version__}'s mixture model converged (dew {dew_c} °C, bubble {bub_c} °C)")


def mass_percent(solver: Solver) -> dict[str, float]:
    names = solver.state.fluid_names()
    z = solver.state.get_mole_fractions()
    molar = [CP.PropsSI("molar_mass", n) for n in names]
    total = sum(zi * mi for zi, mi in zip(z, molar))
    return {n: zi * mi / total * 100 for n, zi, mi in zip(names, z, molar)}


def gwp_for(rid: str, comp: dict | None) -> tuple[int, str]:
    if comp is None:
        return SINGLE_GWP[rid]
    return round(sum(COMPONENT_GWP_AR4[c] * pct / 100 for c, pct in comp.items())), BLEND_NOTE


def js_str(s: str) -> str:
    return json.dumps(s, ensure_ascii=False)


def main() -> None:
    if CoolProp.__version__ != EXPECTED_COOLPROP:
        fail(f"CoolProp {EXPECTED_COOLPROP} expected, found {CoolProp.__version__}")
    for c in CHECK_AGAINST_COOLPROP:
        cp_gwp = CP.PropsSI("GWP100", c)
        if round(cp_gwp) != COMPONENT_GWP_AR4[c]:
            fail(f"GWP of {c}: table {COMPONENT_GWP_AR4[c]} vs CoolProp GWP100 {cp_gwp}")

    rng = random.Random(20240607)
    entries: list[str] = []
    fixture: dict = {
        "source": f"CoolProp {CoolProp.__version__} (HEOS backend), generated by scripts/gen_refrigerants.py",
        "units": {"temperatureC": "degC", "pressureKPaAbs": "kPa absolute"},
        "glideAtDewC": GLIDE_AT_DEW_C,
        "refrigerants": {},
    }
    header_models: list[str] = []
    for rid, fluid, name, safety, kind, comp, min_c, max_c in REFRIGERANTS:
        solver = Solver(fluid)
        if comp is not None:
            actual = mass_percent(solver)
            for c, pct in comp.items():
                if abs(actual.get(c, -1) - pct) > 0.05:
                    fail(f"{rid}: CoolProp {fluid} has {c} at {actual.get(c)} % by mass, ASHRAE 34 says {pct}")
        temps = grid(min_c, max_c)
        dew = curve_on_grid(solver, 1.0, temps)
        bubble = curve_on_grid(solver, 0.0, temps)
        curves = {}
        for cname, states in (("dew", dew), ("bubble", bubble)):
            ln_p = [math.log(s["p"] / 1000.0) for s in states]
            check_smooth(rid, cname, ln_p)
            curves[cname] = [round(v * LNP_SCALE) for v in ln_p]
        for d, b in zip(dew, bubble):
            if b["p"] < d["p"] * (1 - 1e-9):
                fail(f"{rid}: bubble pressure below dew pressure at {d['T'] - 273.15:.2f} degC")
            if comp is not None and abs(d["rl"] - d["rv"]) < 0.05 * d["rl"]:
                fail(f"{rid}: trivial solution (liquid = vapour) at {d['T'] - 273.15:.2f} degC")
        mid_err = max(check_midpoints(rid, "dew", solver, 1.0, temps, dew, curves["dew"]),
                      check_midpoints(rid, "bubble", solver, 0.0, temps, bubble, curves["bubble"]))
        crit_c, crit_kpa, limit_note = upper_limit(rid, fluid, comp, max_c)

        # Reference points off the grid: random temperatures and pressures, both curves.
        h = temps[1] - temps[0]
        ref: dict = {"fluid": "HEOS::" + fluid, "dew": [], "bubble": []}
        for cname, q, states in (("dew", 1.0, dew), ("bubble", 0.0, bubble)):
            pts = []
            while len(pts) < 12:
                t = rng.uniform(min_c, max_c)
                frac = (t - min_c) / h
                if abs(frac - round(frac)) < 0.1:
                    continue  # too close to a grid node
                near = states[min(range(len(temps)), key=lambda i: abs(temps[i] - t))]
                s = solver.solve(CP.QT_INPUTS, q, t + 273.15, near)
                pts.append({"temperatureC": round(t, 4), "pressureKPaAbs": round(s["p"] / 1000.0, 5)})
            p_lo, p_hi = states[0]["p"], states[-1]["p"]
            while len(pts) < 24:
                p = math.exp(rng.uniform(math.log(p_lo), math.log(p_hi)))
                near = states[min(range(len(states)), key=lambda i: abs(states[i]["p"] - p))]
                s = solver.solve(CP.PQ_INPUTS, q, p, near)
                t = s["T"] - 273.15
                frac = (t - min_c) / h
                if abs(frac - round(frac)) < 0.1:
                    continue
                pts.append({"temperatureC": round(t, 5), "pressureKPaAbs": round(p / 1000.0, 4)})
            ref[cname] = pts
        if rid in HOT_DAY_REFRIGERANTS:
            # Bubble-point pressures at hot-day condensing temperatures, for the subcooling checks.
            ref["hotDayBubble"] = [
                {"temperatureC": t, "pressureKPaAbs": round(solver.solve(
                    CP.QT_INPUTS, 0.0, t + 273.15,
                    bubble[min(range(len(temps)), key=lambda i: abs(temps[i] - t))])["p"] / 1000.0, 4)}
                for t in HOT_DAY_CONDENSING_C]
        if crit_c is not None:
            ref["critical"] = {"temperatureC": round(crit_c, 4), "pressureKPaAbs": round(crit_kpa, 3)}
        p_dew = solver.solve(CP.QT_INPUTS, 1.0, GLIDE_AT_DEW_C + 273.15, None)
        t_bub = solver.solve(CP.PQ_INPUTS, 0.0, p_dew["p"], None)["T"] - 273.15
        ref["glideAtDewK"] = round(GLIDE_AT_DEW_C - t_bub, 4)
        fixture["refrigerants"][rid] = ref

        gwp, gwp_source = gwp_for(rid, comp)
        model = "mixture" if comp is not None else "pure"
        header_models.append(f"//   {rid:9s} HEOS::{fluid:15s} {model}{'' if solver.fallbacks == 0 else f' ({solver.fallbacks} states solved from a neighbouring guess)'}")
        entries.append(
            "  {\n"
            f"    id: {js_str(rid)},\n"
            f"    name: {js_str(name)},\n"
            f"    fluid: {js_str('HEOS::' + fluid)},\n"
            f"    model: {js_str(model)},\n"
            f"    kind: {js_str(kind)},\n"
            f"    safetyClass: {js_str(safety)},\n"
            f"    gwp: {gwp},\n"
            f"    gwpSource: {js_str(gwp_source)},\n"
            f"    minC: {min_c},\n"
            f"    maxC: {max_c},\n"
            f"    criticalC: {'null' if crit_c is None else round(crit_c, 3)},\n"
            f"    criticalKPaAbs: {'null' if crit_kpa is None else round(crit_kpa, 2)},\n"
            f"    upperLimit: {js_str(limit_note)},\n"
            f"    dewLnPkPaMicro: [{','.join(str(v) for v in curves['dew'])}],\n"
            f"    bubbleLnPkPaMicro: [{','.join(str(v) for v in curves['bubble'])}],\n"
            "  },"
        )
        print(f"{rid:9s} {min_c:7.2f}..{max_c:6.2f} degC  {len(temps)} nodes  GWP {gwp}  "
              f"glide@dew-10 {ref['glideAtDewK']:.3f} K  fallbacks {solver.fallbacks}  "
              f"mid-point error {mid_err:.5f} K  {limit_note}", flush=True)

    ids = ", ".join(js_str(r[0]) for r in REFRIGERANTS)
    text = f"""// GENERATED by scripts/gen_refrigerants.py from CoolProp {CoolProp.__version__} (HEOS backend). Do not edit by hand.
// Regenerate with `npm run gen:refrigerants` (needs `pip install CoolProp=={EXPECTED_COOLPROP}`).
//
// Fluid strings used (all blends are CoolProp's predefined multi-component mixture models, so every
// blend has its own dew and bubble curve; none uses a pseudo-pure fluid):
{chr(10).join(header_models)}
// Mixture compositions were checked against the ASHRAE 34 nominal mass fractions listed in `name`.
// Zeotropes (glide of several K): R-448A, R-449A, R-407A, R-407C, R-452A, R-454C, R-455A.
// Near-azeotropes (glide under ~0.6 K): R-404A, R-410A. Azeotropes (glide ~0.05 K or less): R-507A, R-513A.
//
// Each curve: ln(P / kPa) x {LNP_SCALE} (integers) at equally spaced temperatures from minC to maxC inclusive
// (step <= {GRID_STEP_MAX_K} K). dew = saturated vapour (Q=1), bubble = saturated liquid (Q=0).
// The tables cover the whole subcritical range: pure fluids end 0.05-3.5 K below their critical point
// (criticalC / criticalKPaAbs, CoolProp), blends at least {BLEND_MARGIN_K} K below where CoolProp's mixture model
// converges (see upperLimit). Interpolation checked against CoolProp at every segment mid-point (< {MIDPOINT_TOLERANCE_K} K).
// R-744 starts just above its triple point (-56.558 degC) and ends 0.08 K below its critical point (30.978 degC).
// GWP: IPCC AR4 100-year; blends mass-weighted from components (see gwpSource). Safety classes: ASHRAE 34 (from memory).

export interface GeneratedRefrigerant {{
  readonly id: string;
  readonly name: string;
  readonly fluid: string;
  readonly model: 'mixture' | 'pure';
  readonly kind: 'pure' | 'azeotrope' | 'near-azeotrope' | 'zeotrope';
  readonly safetyClass: 'A1' | 'A2L' | 'A3' | 'B2L';
  readonly gwp: number;
  readonly gwpSource: string;
  readonly minC: number;
  readonly maxC: number;
  /** Critical temperature, degC, and pressure, kPa abs (CoolProp); null for blends. */
  readonly criticalC: number | null;
  readonly criticalKPaAbs: number | null;
  /** Where and why the tables end at maxC. */
  readonly upperLimit: string;
  readonly dewLnPkPaMicro: readonly number[];
  readonly bubbleLnPkPaMicro: readonly number[];
}}

export const GENERATED_SOURCE = {js_str(f'CoolProp {CoolProp.__version__} (HEOS backend)')};
export const LN_P_SCALE = {LNP_SCALE};
export const GENERATED_IDS = [{ids}] as const;

export const GENERATED_REFRIGERANTS: readonly GeneratedRefrigerant[] = [
{chr(10).join(entries)}
];
"""
    with open(DATA_OUT, "w", encoding="utf-8") as f:
        f.write(text)
    os.makedirs(os.path.dirname(FIXTURE_OUT), exist_ok=True)
    with open(FIXTURE_OUT, "w", encoding="utf-8") as f:
        json.dump(fixture, f, indent=1)
        f.write("\n")
    print(f"wrote {os.path.relpath(DATA_OUT, ROOT)} and {os.path.relpath(FIXTURE_OUT, ROOT)}")


if __name__ == "__main__":
    main()
