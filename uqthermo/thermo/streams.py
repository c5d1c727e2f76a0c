"""Open-system (steady flow) energy balance of a continuous reactor: the real cooling duty.

Steady state, one outlet at the reactor temperature T_out, feed streams s entering at their
own temperatures T_s, reactions r at extent rates ξ̇_r; kinetic and potential energy and shaft
work neglected. The first law for the control volume, written with the reactions at the
reactor temperature (the "heat of reaction method" with reference temperature T_out;
R. M. Felder and R. W. Rousseau, *Elementary Principles of Chemical Processes*, 3rd ed., Wiley
2005, §9.5a; by Hess's law equal to the heat-of-formation form), gives the heat to remove:

.. math::

    \\dot Q_\\mathrm{remove} = -\\sum_r \\dot\\xi_r\\,\\Delta_r H_r(T_\\mathrm{out})
        - \\sum_s \\sum_i \\dot n_{s,i}\\,\\Delta H_i(T_s \\to T_\\mathrm{out})

where ΔH_i(T_s → T_out) is the enthalpy to bring species i from its feed phase at T_s to the
reactor temperature along its own path, latent heats of the transitions met included (a
liquid feed that vaporises on the way takes its heat of vaporisation from the reactor). The
unreacted part of the feed and the products leave at T_out, so no outlet term remains.
Condition for Hess's law to hold as written: a fed species that takes part in a reaction must
reach T_out in the phase the reaction equation gives it (checked by the case reader's model
check). Species in no feed stream are taken to enter at T_out.

Pure and vectorised: flows (N, 1) mol/s, enthalpies J/mol, duties W.
"""

from __future__ import annotations

import numpy as np

__all__ = ["feed_heating_duty", "open_system_duty"]


def feed_heating_duty(flows, heating_enthalpies) -> np.ndarray:
    r"""Heat taken up by feed streams brought to the reactor temperature: :math:`\sum_i \dot n_i \Delta H_i`, W.

    Parameters
    ----------
    flows : sequence of array_like
        Molar flows ṅ_i, mol/s (each broadcastable, e.g. (N, 1)).
    heating_enthalpies : sequence of array_like
        ΔH_i(T_s → T_out), J/mol, in the same order.
    """
    total = np.zeros(())
    for n, h in zip(flows, heating_enthalpies, strict=True):
        total = total + np.asarray(n, dtype=float) * np.asarray(h, dtype=float)
    return total


def open_system_duty(extent_rates, delta_r_H, feed_heat) -> np.ndarray:
    r"""Heat to remove from a continuous reactor, W (positive: cooling needed).

    .. math:: \dot Q_\mathrm{remove} = -\sum_r \dot\xi_r \Delta_r H_r(T_\mathrm{out}) - \dot Q_\mathrm{feed}

    (module docstring; Felder & Rousseau 2005, §9.5a).

    Parameters
    ----------
    extent_rates, delta_r_H : sequences of array_like
        ξ̇_r (mol/s) and Δ_rH_r(T_out) (J/mol) per reaction.
    feed_heat : array_like
        :func:`feed_heating_duty` of all feed streams, W.
    """
    q = -np.asarray(feed_heat, dtype=float)
    for xi, dh in zip(extent_rates, delta_r_H, strict=True):
        q = q - np.asarray(xi, dtype=float) * np.asarray(dh, dtype=float)
    return q
