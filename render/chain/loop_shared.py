"""Constants the loop solver (:mod:`render.chain.loop`) and its compiled kernel (:mod:`render.chain._loop_kernel`) share."""

from __future__ import annotations

import math

GAMMA = 2.0 - math.sqrt(2.0)  # TR-BDF2's stage: both stages then share one matrix (Bank et al. 1985)
RAIL_TOL_V = 1e-12  # V: the op-amp state within this of a clamp is at the rail
NO_SLEW = 1e301  # V per step standing for no slew limit
STAGE_1 = 1.0 / (GAMMA * (2.0 - GAMMA))  # TR-BDF2's BDF2 stage: weights of Z[γ] and Z[0]
STAGE_0 = -((1.0 - GAMMA) ** 2) / (GAMMA * (2.0 - GAMMA))

# carried scalars in the loop's state vector ``hist``
H_X, H_XL1, H_XL2, H_VO1, H_P1, H_P2 = range(6)
