"""tenure: long-horizon fleet and asset renewal planning.

Data flows one way: case file → model (``tenure.model``) → economics
(``money``, ``curves``, ``life``) → solvers (``chain``, ``fleet``) → plan
(``tenure.plan``) → writers (``tenure.report``) → command line (``tenure.cli``).
"""

__version__ = "0.1.0"
