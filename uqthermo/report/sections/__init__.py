"""The report by section: each module builds the context (display tables, statements, notes) of one part.

* :mod:`.numbers` — numbers that remember where in results.json they come from;
* :mod:`.statement` — the statement of result per output (JCGM 100 §7.2);
* :mod:`.budget` — the GUM uncertainty budget table and ``tables/budget-<output>.csv``;
* :mod:`.kirchhoff` — the Kirchhoff breakdown of reaction enthalpies;
* :mod:`.concise` — the concise section (what a design or safety file takes over);
* :mod:`.ranking` — driver and what-if tables cut at 99 % of the variance.
"""
