"""Component tolerances, Monte Carlo samples and worst-case extremes of a corner.

What varies (``tolerances:`` in derate.yaml):
- netlist elements by name pattern, ±%: top-level R, L and C values; V and I source levels (the DC
  value; a SIN's offset and amplitude; a PULSE's two levels; a PWL's values);
- every reviewed top-level capacitor's capacitance: by its part's ``tolerance_pct`` (``capacitors:
  parts``, the default), by one ±% for all, or not at all; ``ageing_pct`` moves the nominal down
  (the capacitance lost at end of life, as manufacturers state it);
- the ESR of capacitors simulated with one, ±``esr_pct``.

A sample draws one factor per varying quantity: ``1 + t * z`` with ``z`` from a normal distribution
with sigma 1/3 truncated to [-1, 1] (the tolerance taken as a 3-sigma bound: common practice), or
uniform on [-1, 1].  Sample k of corner c uses its own random stream from (seed, c, k), so a sample
is the same whatever runs it, in whatever order.

The worst case draws no numbers.  ``vertices`` runs every vertex of the tolerance box (2^n runs per
corner, n at most 10): when each judged figure is monotonic in each quantity, its worst value is at
one of them, so the worst case found is the true one.  ``sensitivity`` runs each quantity alone at
its upper bound (n runs), then, for every capacitor and judged figure, the vertex with each quantity
at the bound that raised that figure, plus the all-upper and all-lower vertices: exact when each
figure is monotonic and the quantities do not reverse each other's effect (a linearised search; a
strong interaction between two quantities can hide a worse vertex).  ``auto`` takes the vertices
for up to 4 quantities and the sensitivities above.

Elements inside subcircuits vary per subcircuit card (every instance alike); a note says so.
"""

from __future__ import annotations

import fnmatch
import itertools
import math
from dataclasses import dataclass

import numpy as np

from .errors import DataError

DISTRIBUTIONS = ("normal", "uniform")
MAX_SAMPLES = 10_000


@dataclass(frozen=True)
class Tolerances:
    distribution: str = "normal"
    elements: tuple[tuple[str, float], ...] = ()  # (name pattern, ±%)
    capacitors: str | float = "parts"  # "parts", "none", or a ±% for every capacitor
    esr_pct: float | None = None
    ageing_pct: float = 0.0

    @property
    def given(self) -> bool:
        return bool(self.elements or self.esr_pct or self.ageing_pct or self.capacitors != "none")


@dataclass(frozen=True)
class Varying:
    """One quantity that varies: ``key`` (``value:RL5``, ``source:VAC``, ``esr:C3``) and its ±fraction."""

    key: str
    fraction: float
    shift: float = 0.0  # a fixed relative move of the nominal (ageing: negative)


def varying(tol: Tolerances, circuit, parts, skip=frozenset(), notes: list[str] | None = None) -> tuple[Varying, ...]:
    """What varies in this circuit, sorted by key (the order decides nothing but the draw's order)."""
    out: dict[str, Varying] = {}
    inner: list[str] = []
    for el in circuit.elements:
        name = el.path
        own = name.rsplit(".", 1)[-1].upper()  # 'R*' names the resistors of subcircuits too
        pct = next((p for pat, p in tol.elements
                    if fnmatch.fnmatchcase(name.upper(), pat.upper()) or fnmatch.fnmatchcase(own, pat.upper())), None)
        if pct is None or el.kind not in "rlcvi":
            continue
        if el.instance:
            inner.append(name)
            continue
        if el.kind in "vi":
            out[f"source:{name}"] = Varying(f"source:{name}", pct / 100.0)
        elif el.value is not None:
            out[f"value:{name}"] = Varying(f"value:{name}", pct / 100.0)
    for cap in circuit.capacitors():
        if cap.path in skip or cap.value is None:
            continue
        if cap.instance:
            if tol.capacitors not in ("none",):
                inner.append(cap.path)
            continue
        part = parts.get(cap.path) if parts else None
        if tol.capacitors == "parts":
            pct = part.tolerance_pct if part is not None and part.tolerance_pct else None
        elif tol.capacitors == "none":
            pct = None
        else:
            pct = float(tol.capacitors)
        shift = -tol.ageing_pct / 100.0
        if (pct or shift) and f"value:{cap.path}" not in out:
            out[f"value:{cap.path}"] = Varying(f"value:{cap.path}", (pct or 0.0) / 100.0, shift)
        if tol.esr_pct and part is not None and (part.esr_ohm or part.esr_table):
            out[f"esr:{cap.path}"] = Varying(f"esr:{cap.path}", tol.esr_pct / 100.0)
    if inner and notes is not None:
        notes.append(f"tolerances are not applied to elements inside subcircuits ({', '.join(inner[:5])}"
                     + (" …" if len(inner) > 5 else "") + "): every instance shares its card")
    return tuple(out[k] for k in sorted(out))


def _draw(rng: np.random.Generator, distribution: str, n: int) -> np.ndarray:
    if distribution == "uniform":
        return rng.uniform(-1.0, 1.0, n)
    z = rng.normal(0.0, 1.0 / 3.0, n)
    bad = np.abs(z) > 1.0
    while bad.any():  # truncate by redrawing what falls outside the bound
        z[bad] = rng.normal(0.0, 1.0 / 3.0, int(bad.sum()))
        bad = np.abs(z) > 1.0
    return z


def sample(items: tuple[Varying, ...], distribution: str, seed: int, corner: int, k: int) -> tuple[tuple[str, float], ...]:
    """The factors of sample ``k`` (from 1) of corner number ``corner``: reproducible from the seed."""
    rng = np.random.default_rng(np.random.SeedSequence([seed, corner, k]))
    z = _draw(rng, distribution, len(items))
    return tuple((v.key, float((1.0 + v.shift) * (1.0 + v.fraction * zk))) for v, zk in zip(items, z))


def extremes(items: tuple[Varying, ...]) -> list[tuple[str, tuple[tuple[str, float], ...]]]:
    """Every quantity at its upper, then at its lower bound (two vertices of the tolerance box)."""
    return [(side, tuple((v.key, (1.0 + v.shift) * (1.0 + sign * v.fraction)) for v in items))
            for side, sign in (("max", 1.0), ("min", -1.0))]


# ---------------------------------------------------------------- worst case
WORST_CASE_METHODS = ("auto", "vertices", "sensitivity")
MAX_VERTEX_FACTORS = 10  # 2^10 = 1024 runs per corner: the most the vertices method may ask for
AUTO_VERTICES_UP_TO = 4  # auto: every vertex for up to 4 quantities (16 runs), sensitivities above


def worst_case_method(requested: bool | str, n: int) -> str:
    """The method a worst-case run uses for ``n`` varying quantities (DataError when impossible)."""
    method = "auto" if requested is True else str(requested)
    if method == "auto":
        return "vertices" if n <= AUTO_VERTICES_UP_TO else "sensitivity"
    if method == "vertices" and n > MAX_VERTEX_FACTORS:
        raise DataError(f"the vertices worst case of {n} varying quantities needs 2^{n} runs per corner (at most "
                        f"2^{MAX_VERTEX_FACTORS}); use the sensitivity method, or vary fewer quantities")
    return method


def _at(v: Varying, sign: float) -> float:
    return (1.0 + v.shift) * (1.0 + sign * v.fraction)


def signs_name(signs: tuple[float, ...]) -> str:
    """A vertex's name: one '+' or '-' per varying quantity, in key order (``v+-+``)."""
    return "v" + "".join("+" if s > 0 else "-" for s in signs)


def vertices(items: tuple[Varying, ...]) -> list[tuple[str, tuple[tuple[str, float], ...]]]:
    """Every vertex of the tolerance box: each quantity at its upper or lower bound (2^n samples)."""
    out = []
    for signs in itertools.product((1.0, -1.0), repeat=len(items)):
        out.append((signs_name(signs), tuple((v.key, _at(v, s)) for v, s in zip(items, signs))))
    return out


def one_at_a_time(items: tuple[Varying, ...]) -> list[tuple[str, tuple[tuple[str, float], ...]]]:
    """The sensitivity runs: each quantity alone at its upper bound, the others nominal."""
    return [(f"{v.key}+", tuple((w.key, _at(w, 1.0) if w is v else _at(w, 0.0)) for w in items)) for v in items]


def judged_quantities(s, esr_factor: float = 1.0) -> dict[str, float]:
    """The stress figures the checks compare with limits, each signed so that larger is worse: peak and
    most positive and most negative voltage, peak-to-peak, start-up extremes, ripple current, ripple
    loss (I^2 x ESR: the hot spot and life follow it) and the DC bias."""
    return {"v_max": s.v_max_v, "v_min": -s.v_min_v, "v_peak": s.v_peak_abs_v, "v_pp": s.v_ripple_pp_v,
            "startup_max": s.startup_v_peak_v, "startup_min": -s.startup_v_min_v, "i_ac": s.i_ac_rms_a,
            "loss": s.i_ac_rms_a ** 2 * esr_factor, "v_dc": abs(s.v_mean_v)}


def worst_vertices(items: tuple[Varying, ...], nominal: dict, moved: dict[str, dict]) -> list[tuple[str, tuple]]:
    """The vertices that make each capacitor's each judged quantity worst, from the sensitivities: each
    quantity at the bound that raised it when moved alone (``moved[key]`` = {capacitor: Stress} with that
    key at its upper bound; ``nominal`` = {capacitor: Stress}).  One sample per distinct vertex; the
    all-upper and all-lower vertices are always among them."""
    seen: dict[tuple[float, ...], None] = {tuple(1.0 for _ in items): None, tuple(-1.0 for _ in items): None}
    for cap, base in nominal.items():
        q0 = judged_quantities(base)
        deltas = []
        for v in items:
            other = moved.get(v.key, {}).get(cap)
            esr = _at(v, 1.0) if v.key == f"esr:{cap}" else 1.0
            q1 = judged_quantities(other, esr) if other is not None else q0
            deltas.append({k: q1[k] - q0[k] for k in q0})
        for quantity in q0:
            signs = tuple(1.0 if d[quantity] >= 0 else -1.0 for d in deltas)
            seen.setdefault(signs, None)
    return [(signs_name(signs), tuple((v.key, _at(v, s)) for v, s in zip(items, signs))) for signs in seen]


def distribution(ratios: list[float], p: float) -> dict:
    """Stress ratios of a corner's samples: mean, percentiles, the share over the limit."""
    arr = np.sort(np.asarray(ratios, dtype=float))
    return {"samples": int(len(arr)), "mean": float(arr.mean()), "p50": percentile(arr, 50.0),
            "p95": percentile(arr, 95.0), "p99_73": percentile(arr, 99.73), "gate_percentile": p,
            "at_gate": percentile(arr, p), "max": float(arr[-1]), "p_exceed": float(np.mean(arr > 1.0)),
            "ratios": [float(x) for x in ratios]}


def percentile(sorted_values: np.ndarray, p: float) -> float:
    """Nearest-rank percentile (a value some sample really had)."""
    n = len(sorted_values)
    rank = max(1, math.ceil(p / 100.0 * n))
    return float(sorted_values[min(rank, n) - 1])


def nearest_rank_index(ratios: list[float], p: float) -> int:
    """Index (into ``ratios``) of the sample at the nearest-rank percentile ``p``."""
    order = sorted(range(len(ratios)), key=lambda j: ratios[j])
    rank = max(1, math.ceil(p / 100.0 * len(order)))
    return order[min(rank, len(order)) - 1]


def check_samples(n: int | None) -> None:
    if n is not None and not 1 <= n <= MAX_SAMPLES:
        raise DataError(f"samples expects 1 to {MAX_SAMPLES}, got {n!r}")
