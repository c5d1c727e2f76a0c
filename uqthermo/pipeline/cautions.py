"""The cautions every results.json and report carries where numbers feed safety decisions."""

SAFETY_CAUTIONS = [
    "These figures are estimates from tabulated data and correlations. They support, and never replace, "
    "reaction calorimetry (e.g. heat-flow or adiabatic calorimetry of the actual reaction mass) and a hazard "
    "review by qualified people.",
    "Design and relief decisions must follow the applicable local codes, standards and licensed engineering "
    "practice; the margins shown here are statistical, not regulatory, margins.",
    "The Monte Carlo result is only as good as the stated input uncertainties and the model (Kirchhoff's law "
    "along the stated phase path, ideal mixing, no side reactions unless modelled).",
]

__all__ = ["SAFETY_CAUTIONS"]
