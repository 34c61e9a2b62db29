"""The numerical core: arrays in, plain result objects out.

Imports numpy and scipy only: no pandas, no I/O, no web types.
"""

from rankscope.core.diagnosis import Diagnosis, diagnose
from rankscope.core.factor import Factorization, factorize

__all__ = ["Diagnosis", "Factorization", "diagnose", "factorize"]
