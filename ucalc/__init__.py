"""ucalc: measurement-uncertainty budgets for analytical-chemistry laboratories.

Budgets are YAML files; ucalc validates them, propagates them by the law of propagation of uncertainty
(JCGM 100:2008) and by Monte Carlo (JCGM 101:2008), and reports the expanded uncertainty.
"""

__version__ = "0.1.0"
