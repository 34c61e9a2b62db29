"""rankscope: inspect the design matrix of a linear model.

Imports run one way, the allowed directions listed once in DEVELOPERS.md (Architecture map).
"""

__version__ = "0.1.0"
