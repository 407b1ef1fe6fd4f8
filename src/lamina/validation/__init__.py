"""Independent reference solutions and the validation suite of lamina.

:mod:`lamina.validation.references` holds published exact results (Chandrasekhar's
H-functions, the isothermal slab) and independent methods (Ambartsumian's nonlinear
integral equation, adding-doubling) written from the published mathematics with numpy
and scipy only. Nothing here calls lamina's own solver.
"""

from __future__ import annotations
