"""Species phase paths: transitions on the way, formation-scale routes, sampled overrides, errors.

Data used:
- water: liquid Cp = NIST WebBook Shomate (298-500 K); gas Cp = GRI-Mech 3.0 NASA-7 for H2O
  (Cantera gri30.yaml, 200-3500 K); ΔvapH = 40.65 kJ/mol at 373.12 K (CRC Handbook, as
  shipped in chemicals' "CRC Handbook Heat of Vaporization" table).
- benzene: Tm 278.68 K, ΔfusH 9.87 kJ/mol, Tb 353.24 K, ΔvapH 30.72 kJ/mol, Cp(cr) 118,
  Cp(l) 136.0, Cp(g) 82.4 J/(mol K), ΔfH(l) 49.0 kJ/mol, S°(l) 173.4 J/(mol K): recalled from
  memory, used only to exercise the path algebra (constant Cp on purpose).
"""

import numpy as np
import pytest

from uqthermo.errors import PathError, ValidityError
from uqthermo.thermo import ConstantCp, Nasa7Cp, Phase, ShomateCp, Species, Transition

WATER_L = [(298.0, 500.0, [-203.6060, 1523.290, -3196.413, 2474.455, 3.855326])]
H2O_LOW = [4.19864056, -2.0364341e-03, 6.52040211e-06, -5.48797062e-09, 1.77197817e-12, -3.02937267e04, -0.849032208]
H2O_HIGH = [3.03399249, 2.17691804e-03, -1.64072518e-07, -9.7041987e-11, 1.68200992e-14, -3.00042971e04, 4.9667701]
TB, DHVAP = 373.12, 40650.0


def water(gas_anchor=False):
    """Liquid anchored by ΔfH (CODATA -285.83 kJ/mol, recalled from memory), gas routed through
    the vaporisation; with gas_anchor the NASA-7 a6/a7 anchor the gas and the liquid is routed."""
    liq = Phase("l", ShomateCp(WATER_L), None if gas_anchor else -285830.0, None if gas_anchor else 69.95)
    gas = Phase("g", Nasa7Cp.from_two_ranges(200, 1000, 3500, H2O_LOW, H2O_HIGH), nasa_anchor=gas_anchor)
    return Species("H2O", "H2O", {"l": liq, "g": gas}, [Transition("l", "g", TB, DHVAP)])


def benzene(**kw):
    phases = {
        "cr": Phase("cr", ConstantCp(118.0)),
        "l": Phase("l", ConstantCp(136.0), 49.0e3, 173.4),
        "g": Phase("g", ConstantCp(82.4)),
    }
    phases.update(kw)
    return Species("C6H6", "C6H6", phases,
                   [Transition("cr", "l", 278.68, 9870.0), Transition("l", "g", 353.24, 30720.0)])


def test_heating_liquid_to_steam_sums_the_pieces():
    w = water()
    liq, gas = w.phases["l"].cp, w.phases["g"].cp
    expected = liq.enthalpy_change(298.15, TB) + DHVAP + gas.enthalpy_change(TB, 500.0)
    assert float(w.heating_enthalpy("l", 298.15, 500.0)) == pytest.approx(float(expected), rel=1e-13)
    s_exp = liq.entropy_change(298.15, TB) + DHVAP / TB + gas.entropy_change(TB, 500.0)
    assert float(w.heating_entropy("l", 298.15, 500.0)) == pytest.approx(float(s_exp), rel=1e-13)


def test_path_segments_and_final_phase():
    w = water()
    segs = w.path("l", 298.15, 500.0)
    assert [s.kind for s in segs] == ["heat", "crossing", "heat"]
    assert (segs[0].phase, segs[0].T_start, segs[0].T_end) == ("l", 298.15, TB)
    assert segs[1].transition.label == "l-g" and segs[1].sign == 1
    assert (segs[2].phase, segs[2].T_end) == ("g", 500.0)
    assert w.final_phase("l", 298.15, 350.0) == "l"
    assert w.final_phase("l", 298.15, TB) == "l"          # ends exactly at Tb: not yet boiled
    assert w.final_phase("g", 500.0, 300.0) == "l"        # cooling condenses
    cool = w.path("g", 500.0, 300.0)
    assert cool[1].kind == "crossing" and cool[1].sign == -1
    assert "g -> l at 373.12 K" == cool[1].describe()


def test_split_at_intermediate_temperature_gives_same_result():
    w = water()
    whole = float(w.heating_enthalpy("l", 298.15, 500.0))
    below = float(w.heating_enthalpy("l", 298.15, 350.0) + w.heating_enthalpy("l", 350.0, 500.0))
    above = float(w.heating_enthalpy("l", 298.15, 420.0) + w.heating_enthalpy("g", 420.0, 500.0))
    assert below == pytest.approx(whole, rel=1e-13)
    assert above == pytest.approx(whole, rel=1e-13)
    s_whole = float(w.heating_entropy("l", 298.15, 500.0))
    s_split = float(w.heating_entropy("l", 298.15, 420.0) + w.heating_entropy("g", 420.0, 500.0))
    assert s_split == pytest.approx(s_whole, rel=1e-13)


def test_there_and_back_sums_to_zero():
    w = water()
    assert float(w.heating_enthalpy("l", 298.15, 500.0) + w.heating_enthalpy("g", 500.0, 298.15)) == pytest.approx(0, abs=1e-8)
    b = benzene()
    up = b.heating_enthalpy("cr", 250.0, 400.0)
    assert b.final_phase("cr", 250.0, 400.0) == "g"
    assert float(up + b.heating_enthalpy("g", 400.0, 250.0)) == pytest.approx(0, abs=1e-8)
    assert float(up) == pytest.approx(118 * 28.68 + 9870 + 136 * (353.24 - 278.68) + 30720 + 82.4 * (400 - 353.24))
    assert float(b.heating_entropy("cr", 250.0, 400.0) + b.heating_entropy("g", 400.0, 250.0)) == pytest.approx(0, abs=1e-10)


def test_temperature_arrays_spanning_the_transition():
    w = water()
    T = np.array([300.0, 350.0, TB, 400.0, 500.0])
    vec = w.heating_enthalpy("l", 298.15, T)
    assert vec.shape == (5,)
    np.testing.assert_allclose(vec, [float(w.heating_enthalpy("l", 298.15, t)) for t in T], rtol=1e-13)
    # mixed heating and cooling from 360 K (liquid)
    T2 = np.array([300.0, 360.0, 400.0])
    mix = w.heating_enthalpy("l", 360.0, T2)
    np.testing.assert_allclose(mix, [float(w.heating_enthalpy("l", 360.0, t)) for t in T2], rtol=1e-13, atol=1e-9)
    assert mix[2] > DHVAP


def test_superheated_start_is_held_in_its_phase():
    b = benzene()
    # a liquid starting above Tb (already past its transition) is heated as liquid
    assert float(b.heating_enthalpy("l", 360.0, 400.0)) == pytest.approx(136.0 * 40.0)
    assert b.final_phase("l", 360.0, 400.0) == "l"


def test_formation_scale_route_through_transitions():
    b = benzene()
    # gas reached from the liquid anchor: ΔfH(l) + ∫l + ΔvapH + ∫g
    assert float(b.enthalpy("g", 500.0)) == pytest.approx(49.0e3 + 136 * (353.24 - 298.15) + 30720 + 82.4 * (500 - 353.24))
    # solid reached downwards: the fusion is crossed in reverse
    assert float(b.enthalpy("cr", 250.0)) == pytest.approx(49.0e3 + 136 * (278.68 - 298.15) - 9870 + 118 * (250 - 278.68))
    # consistent with heating from the anchor
    for T in (400.0, 600.0):
        lhs = float(b.enthalpy("g", T) - b.enthalpy("l", 298.15))
        assert lhs == pytest.approx(float(b.heating_enthalpy("l", 298.15, T)), rel=1e-13)
    S = float(b.entropy("g", 500.0))
    assert S == pytest.approx(173.4 + 136 * np.log(353.24 / 298.15) + 30720 / 353.24 + 82.4 * np.log(500 / 353.24))
    assert b.anchor_phase("cr") == "l"
    segs = b.enthalpy_path("cr", 250.0)
    assert [s.kind for s in segs] == ["heat", "crossing", "heat"] and segs[1].sign == -1


def test_phase_with_its_own_anchor_is_held_as_written():
    b = benzene(g=Phase("g", ConstantCp(82.4), 82.9e3, 269.2))  # ΔfH(g), S°(g) recalled from memory
    assert float(b.enthalpy("g", 500.0)) == pytest.approx(82.9e3 + 82.4 * (500 - 298.15))
    assert float(b.entropy("g", 500.0)) == pytest.approx(269.2 + 82.4 * np.log(500 / 298.15))
    assert b.anchor_phase("g") == "g"


def test_nasa7_phase_anchors_itself_and_routes_the_liquid():
    w = water(gas_anchor=True)
    gas = w.phases["g"].cp
    T = np.array([298.15, 700.0, 1500.0])
    np.testing.assert_allclose(w.enthalpy("g", T), gas.absolute_enthalpy(T), rtol=1e-14)
    np.testing.assert_allclose(w.entropy("g", T), gas.absolute_entropy(T), rtol=1e-14)
    h_l = float(w.enthalpy("l", 298.15))
    expected = float(gas.absolute_enthalpy(TB)) - DHVAP + float(w.phases["l"].cp.enthalpy_change(TB, 298.15))
    assert h_l == pytest.approx(expected, rel=1e-13)
    # plausibility: ΔfH(H2O, l, 298.15 K) = -285.83 kJ/mol (CODATA key value, recalled from memory)
    assert h_l == pytest.approx(-285830.0, abs=500.0)
    # the routed (non-anchored) NASA-7 gas of water() goes through the liquid instead
    w2 = water()
    assert w2.anchor_phase("g") == "l"
    expected_g = -285830.0 + float(w2.phases["l"].cp.enthalpy_change(298.15, TB)) + DHVAP + float(gas.enthalpy_change(TB, 600.0))
    assert float(w2.enthalpy("g", 600.0)) == pytest.approx(expected_g, rel=1e-13)


def test_sampled_overrides_are_vectorised():
    w = water()
    rng = np.random.default_rng(3)
    N = 6
    Tb_s = TB + rng.normal(0, 0.3, (N, 1))
    dH_s = DHVAP + rng.normal(0, 40, (N, 1))
    cl = w.phases["l"].cp.coefficients * (1 + 0.01 * rng.standard_normal((N, 1, 5)))
    dHf = -285830.0 + rng.normal(0, 40, (N, 1))
    vals = {"transition.l-g.temperature": Tb_s, "transition.l-g.enthalpy": dH_s,
            "l.heat_capacity": cl, "l.formation_enthalpy": dHf}
    T = np.array([320.0, 360.0, 400.0, 480.0])
    H = w.heating_enthalpy("l", 298.15, T, vals)
    F = w.enthalpy("g", T, values=vals)
    assert H.shape == F.shape == (N, 4)
    for i in range(N):
        wi = Species("H2O", "H2O", {"l": Phase("l", ShomateCp([(298.0, 500.0, cl[i, 0])]), float(dHf[i, 0])),
                                    "g": w.phases["g"]},
                     [Transition("l", "g", float(Tb_s[i, 0]), float(dH_s[i, 0]))])
        # the path structure is fixed by the nominal Tb; these T are far from it
        np.testing.assert_allclose(H[i], wi.heating_enthalpy("l", 298.15, T), rtol=1e-12)
        np.testing.assert_allclose(F[i], wi.enthalpy("g", T), rtol=1e-12)


def test_sampled_transition_near_an_end_point_stays_smooth():
    # a sampled Tb on the other side of the end temperature keeps the nominal structure
    w = water()
    vals = {"transition.l-g.temperature": np.array([[TB - 1.0], [TB + 1.0]])}
    H = w.heating_enthalpy("l", 298.15, np.array([TB + 0.5]), vals)
    liq, gas = w.phases["l"].cp, w.phases["g"].cp
    for i, tb in enumerate([TB - 1.0, TB + 1.0]):
        exp = liq.enthalpy_change(298.15, tb) + DHVAP + gas.enthalpy_change(tb, TB + 0.5)
        assert float(H[i, 0]) == pytest.approx(float(exp), rel=1e-12)


def test_errors_name_the_datum():
    b = benzene()
    with pytest.raises(PathError, match="no data for phase 'aq'") as e:
        b.enthalpy("aq", 300.0)
    assert e.value.key == "C6H6.aq"
    nocp = benzene(g=Phase("g", None))
    assert float(nocp.enthalpy("l", 298.15)) == pytest.approx(49.0e3)
    with pytest.raises(PathError, match="no heat capacity") as e:
        nocp.heating_enthalpy("l", 300.0, 400.0)
    assert e.value.key == "C6H6.g.heat_capacity"
    bad = Species("X", "C", {"l": Phase("l", ConstantCp(30.0), 0.0)}, [Transition("l", "g", 400.0, 1e4)])
    with pytest.raises(PathError, match="refers to phase 'g'") as e:
        bad.enthalpy("l", 300.0)
    assert e.value.key == "X.transition.l-g"
    circ = Species("X", "C", {p: Phase(p, ConstantCp(30.0), 0.0) for p in ("cr", "l", "g")},
                   [Transition("cr", "l", 300, 1e3), Transition("l", "g", 400, 1e4), Transition("cr", "g", 250, 1e4)])
    with pytest.raises(PathError, match="cycle"):
        circ.validate()
    inc = Species("X", "C", {p: Phase(p, ConstantCp(30.0), 0.0) for p in ("cr", "l", "g")},
                  [Transition("cr", "l", 450, 1e3), Transition("l", "g", 400, 1e4)])
    with pytest.raises(PathError, match="inconsistent transitions"):
        inc.heating_enthalpy("cr", 300, 500)
    neg = Species("X", "C", {p: Phase(p, ConstantCp(30.0), 0.0) for p in ("l", "g")}, [Transition("l", "g", 400, -1e4)])
    assert neg.problems() and neg.problems()[0].key == "X.transition.l-g.enthalpy"
    dup = Species("X", "C", {p: Phase(p, ConstantCp(30.0), 0.0) for p in ("l", "g")},
                  [Transition("l", "g", 400, 1e4), Transition("g", "l", 400, 1e4)])
    with pytest.raises(PathError, match="more than one transition"):
        dup.validate()
    noanchor = Species("X", "C", {"g": Phase("g", ConstantCp(30.0))})
    with pytest.raises(PathError, match="formation enthalpy") as e:
        noanchor.enthalpy("g", 300.0)
    assert e.value.key == "X.g.formation_enthalpy"
    assert float(noanchor.heating_enthalpy("g", 300.0, 400.0)) == pytest.approx(3000.0)


def test_validity_errors_and_extrapolation_reports():
    w = water()
    with pytest.raises(ValidityError, match="600 K outside the validity range 298-500 K") as e:
        w.phase_enthalpy_change("l", 298.15, 600.0)
    assert e.value.key == "H2O.l.heat_capacity"
    # the heating path leaves the liquid at Tb, so 600 K is fine on that path
    assert np.isfinite(w.heating_enthalpy("l", 298.15, 600.0))
    liq_x = Phase("l", ShomateCp(WATER_L, allow_extrapolation=True), -285830.0)
    wx = Species("H2O", "H2O", {"l": liq_x, "g": w.phases["g"]}, w.transitions)
    assert np.isfinite(wx.phase_enthalpy_change("l", 298.15, 600.0))
    from uqthermo.thermo import Segment
    problems = wx.out_of_range([Segment("l", 298.15, 600.0)])
    assert problems and problems[0][0] == "H2O.l.heat_capacity" and "600" in problems[0][1]
    assert wx.out_of_range(wx.path("l", 298.15, 600.0)) == []


def test_phase_lookup_aliases():
    s = Species("NaCl", "NaCl", {"cr": Phase("cr", ConstantCp(50.5), -411.2e3)})
    assert s.resolve_phase("s") == "cr" and s.resolve_phase(None) == "cr"
    assert s.elements == {"Na": 1.0, "Cl": 1.0}
    with pytest.raises(PathError, match="state the phase"):
        water().resolve_phase(None)
