"""Physical constants in SI units used by the physics modules.

References
----------
.. [1] BIPM, "The International System of Units (SI)", 9th edition, 2019.
.. [2] E. Tiesinga et al., "CODATA recommended values of the fundamental physical
   constants: 2018", Rev. Mod. Phys. 93, 025010, 2021.
"""

from __future__ import annotations

import math

#: Speed of light in vacuum [m/s] (exact by definition of the metre, SI 2019).
C0 = 299_792_458.0

#: Vacuum permeability [H/m]. Since the 2019 SI it is measured, not defined;
#: CODATA 2018 gives 1.25663706212e-6, within 1e-9 relative of 4 pi 1e-7, which is kept
#: here so that mu0 / (4 pi) = 1e-7 exactly in the inductance formulas.
MU0 = 4.0e-7 * math.pi

#: Vacuum permittivity [F/m], CODATA 2018.
EPS0 = 8.8541878128e-12

#: mu0 / (4 pi) [H/m], the prefactor of the Neumann integral.
MU0_OVER_4PI = 1.0e-7

#: One mil (thousandth of an inch) [m].
MIL = 25.4e-6

#: One inch [m].
INCH = 25.4e-3
