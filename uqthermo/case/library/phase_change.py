"""Phase-change data: normal boiling and melting points, critical temperatures, ΔvapH correlations.

Owns the phase-change temperatures and the temperature-dependent enthalpies of vaporization
that are not tied to one handbook table (those of the CRC, the WebBook and Perry's Table 2-150 live
in :mod:`.crc`, :mod:`.webbook` and :mod:`.perry`):

``HEOS``
    normal boiling points from the reference equations of state collected in CoolProp
    (I. H. Bell, J. Wronski, S. Quoilin, V. Lemort, Ind. Eng. Chem. Res. 53 (2014) 2498-2508),
    as tabulated by chemicals;
``Yaws-Tb``
    normal boiling points, C. L. Yaws, Thermophysical Properties of Chemicals and Hydrocarbons,
    2nd ed., Elsevier (2014);
``OpenNotebook``
    melting points, J.-C. Bradley, A. Williams, A. Lang, Jean-Claude Bradley Open Melting Point
    Dataset, figshare (2014), doi:10.6084/m9.figshare.1031637 (averaged values);
``VDI-PPDS``
    ΔvapH(T) by the PPDS12 equation, VDI Heat Atlas, 2nd ed., Springer (2010), section D3;
``Watson``
    ΔvapH(T₂) = ΔvapH(T₁) [(1 - T₂/Tc)/(1 - T₁/Tc)]^0.38 (K. M. Watson, Ind. Eng. Chem. 35 (1943)
    398-406) from each tabulated ΔvapH (CRC at Tb and 298.15 K, WebBook at 298.15 K), with Tc from
    ``chemicals.critical.Tc``;
``Alibakhshi``
    one-constant correlation (A. Alibakhshi, Fluid Phase Equilib. 432 (2017) 62-69), valid from
    50 K below Tb to 100 K below Tc, average absolute relative error 4.5 % over 1890 compounds
    (published: u = 4.5 % × √(π/2) = 5.6 %, the standard deviation of normal errors with that
    mean absolute value);
``Riedel``
    ΔvapH at Tb from Tb, Tc, Pc (L. Riedel, Chem. Ing. Tech. 26 (1954) 679; Perry's Handbook
    eq. 4-144 as cited by chemicals, "errors seldom surpass 5 %", read as a rectangular half-width: u = 5 %/√3), an
    estimate used only when nothing else has a value.

Temperatures are at 1 atm (normal points); case files use them as the transition temperatures
of a 1 bar path (the difference is about 0.03-0.04 K for common liquids).
"""

from __future__ import annotations

import functools
import math

from .candidates import ScalarCandidate, SourceInfo

__all__ = ["scalar", "catalog", "curves", "critical_temperature", "watson"]

WATSON_EXPONENT = 0.38


def _info(key, title, citation, kind="compilation", unc="no uncertainty stated", version=""):
    return SourceInfo(key, title, version, citation, kind, unc)


@functools.lru_cache(maxsize=None)
def infos() -> dict[str, SourceInfo]:
    return {
        "HEOS": _info("HEOS", "Reference equations of state (CoolProp)", "I. H. Bell et al., Ind. Eng. Chem. Res. 53 "
                      "(2014) 2498 (normal boiling points of the reference equations of state)", "evaluated"),
        "Yaws-Tb": _info("Yaws-Tb", "Yaws boiling points", "C. L. Yaws, Thermophysical Properties of Chemicals and "
                         "Hydrocarbons, 2nd ed. (2014)", version="2nd ed. (2014)"),
        "OpenNotebook": _info("OpenNotebook", "Bradley Open Melting Point Dataset", "J.-C. Bradley, A. Williams, "
                              "A. Lang, figshare (2014), doi:10.6084/m9.figshare.1031637", version="2014"),
        "VDI-PPDS": _info("VDI-PPDS", "VDI Heat Atlas PPDS12 ΔvapH equation", "VDI Heat Atlas, 2nd ed., Springer "
                          "(2010)", "correlation", version="2nd ed. (2010)"),
        "Watson": _info("Watson", "Watson's relation", "K. M. Watson, Ind. Eng. Chem. 35 (1943) 398", "correlation",
                        version="n = 0.38"),
        "Alibakhshi": _info("Alibakhshi", "Alibakhshi one-constant ΔvapH correlation", "A. Alibakhshi, Fluid Phase "
                            "Equilib. 432 (2017) 62", "correlation", "AARE 4.5 % (published)", version="2017"),
        "Riedel": _info("Riedel", "Riedel's ΔvapH at the normal boiling point", "L. Riedel, Chem. Ing. Tech. 26 (1954) "
                        "679; Perry's Handbook 8th ed.", "estimate", "errors seldom above 5 % (Perry)", version="1954"),
    }


def catalog() -> dict[str, dict[str, set]]:
    return {}


def curves(cas, phase):
    return []


def _safe(fn, *a, **k):
    try:
        v = fn(*a, **k)
    except Exception:
        return None
    try:
        v = float(v)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) and v > 0 else None


@functools.lru_cache(maxsize=4096)
def critical_temperature(cas: str) -> tuple[float, str] | None:
    """(Tc in K, chemicals' method name) or None."""
    import chemicals.critical as cr

    try:
        methods = cr.Tc_methods(cas)
    except Exception:
        methods = []
    for m in methods:
        if m in ("JOBACK", "WILSON_JASPERSON"):
            continue
        v = _safe(cr.Tc, cas, method=m)
        if v:
            return v, m
    return None


def watson(T: float, H_ref: float, T_ref: float, Tc: float, n: float = WATSON_EXPONENT) -> float:
    """Watson's relation ΔvapH(T) = ΔvapH(T_ref) ((1 - T/Tc)/(1 - T_ref/Tc))^n, J/mol.

    K. M. Watson, "Thermodynamics of the liquid state", Ind. Eng. Chem. 35 (1943) 398-406.
    """
    if T >= Tc or T_ref >= Tc:
        return 0.0
    return H_ref * ((1.0 - T / Tc) / (1.0 - T_ref / Tc)) ** n


def scalar(cas: str, quantity: str, phase: str, T=None) -> list[ScalarCandidate]:
    import chemicals.phase_change as pc

    inf = infos()
    out: list[ScalarCandidate] = []
    if quantity == "boiling_temperature" and phase == "l-g":
        v = _safe(pc.Tb, cas, method="HEOS")
        if v:
            out.append(ScalarCandidate(inf["HEOS"], quantity, phase, cas, v, None))
        v = _safe(pc.Tb, cas, method="YAWS")
        if v:
            out.append(ScalarCandidate(inf["Yaws-Tb"], quantity, phase, cas, v, None))
    elif quantity == "melting_temperature" and phase == "s-l":
        v = _safe(pc.Tm, cas, method="OPEN_NTBKM")
        if v:
            out.append(ScalarCandidate(inf["OpenNotebook"], quantity, phase, cas, v, None))
    elif quantity == "vaporization_enthalpy" and phase == "l-g" and T is not None:
        tc = critical_temperature(cas)
        d = pc.phase_change_data_VDI_PPDS_4
        if cas in d.index:
            r = d.loc[cas]
            if T < float(r["Tc"]):
                v = _safe(pc.PPDS12, T, float(r["Tc"]), *(float(r[k]) for k in "ABCDE"))
                if v:
                    out.append(ScalarCandidate(inf["VDI-PPDS"], quantity, phase, cas, v, T,
                                               note=f"PPDS12 at {T:g} K, Tc = {float(r['Tc']):g} K"))
        if tc:
            from . import crc, webbook

            for src, pts in (("CRC", crc.reference_points(cas)), ("WebBook", webbook.reference_points(cas))):
                for t_ref, h_ref in pts:
                    if abs(t_ref - T) < 0.5 or T >= tc[0]:
                        continue
                    v = watson(T, h_ref, t_ref, tc[0])
                    out.append(ScalarCandidate(
                        inf["Watson"], quantity, phase, cas, v, T,
                        note=f"Watson from {src} ΔvapH({t_ref:g} K) = {h_ref / 1000:.4g} kJ/mol, Tc = {tc[0]:g} K "
                             f"({tc[1]})"))
            a = pc.phase_change_data_Alibakhshi_Cs
            tb = _safe(pc.Tb, cas)
            if cas in a.index and tb and tb - 50.0 <= T <= tc[0] - 100.0:
                v = _safe(pc.Alibakhshi, T, tc[0], float(a.at[cas, "C"]))
                if v:
                    u = 0.045 * math.sqrt(math.pi / 2.0) * v
                    out.append(ScalarCandidate(inf["Alibakhshi"], quantity, phase, cas, v, T, u=u, u_basis="published",
                                               u_note="AARE 4.5 % over 1890 compounds (Alibakhshi 2017) -> u = "
                                                      "4.5 % × √(π/2)"))
            import chemicals.critical as cr

            pcrit = _safe(cr.Pc, cas)
            if tb and pcrit and abs(T - tb) < 0.5:
                v = _safe(pc.Riedel, tb, tc[0], pcrit)
                if v:
                    out.append(ScalarCandidate(inf["Riedel"], quantity, phase, cas, v, T, u=0.05 / math.sqrt(3) * v,
                                               u_basis="published",
                                               u_note="errors seldom above 5 % (Perry's Handbook), read as a "
                                                      "rectangular half-width: u = 5 %/√3"))
    return out
