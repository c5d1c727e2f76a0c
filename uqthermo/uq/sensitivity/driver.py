"""One datum's share of an output's variance: the entry every ranking method produces."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Driver"]


@dataclass(frozen=True)
class Driver:
    """One datum's share of an output's variance.

    Attributes
    ----------
    datum : str
    share : float
        Linear: ``c_gᵀ Σ_gg c_g / u²(y)``; Sobol': first-order index S1 clipped to [0, 1].
    share_ci : (float, float) or None
        Bootstrap confidence interval (Sobol' only).
    method : str
        ``"linear"`` or ``"sobol"``.
    """

    datum: str
    share: float
    share_ci: tuple[float, float] | None
    method: str

    def to_dict(self) -> dict:
        """``{"datum", "share", "share_ci"}`` (the contract's driver entry)."""
        return {"datum": self.datum, "share": self.share,
                "share_ci": None if self.share_ci is None else [self.share_ci[0], self.share_ci[1]]}
