"""rankscope: inspect the design matrix of a linear model.

Layers (data flows one way): tables -> design -> core -> report/web/cli.
"""

__version__ = "0.1.0"
