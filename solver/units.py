"""Unit factors between the trade's units (edges) and SI (inside).

Every factor comes from scipy.constants or is exact by definition.
"""
from scipy.constants import e as ELEMENTARY_CHARGE_C
from scipy.constants import epsilon_0 as EPSILON0_F_M
from scipy.constants import h as PLANCK_J_S
from scipy.constants import hbar as HBAR_J_S
from scipy.constants import k as BOLTZMANN_J_K
from scipy.constants import m_e as M0_KG

Q_C = ELEMENTARY_CHARGE_C
EV_TO_J = ELEMENTARY_CHARGE_C
J_TO_EV = 1.0 / ELEMENTARY_CHARGE_C
NM_TO_M = 1e-9
M_TO_NM = 1e9
CM_TO_M = 1e-2
PER_CM3_TO_PER_M3 = 1e6
PER_M3_TO_PER_CM3 = 1e-6
PER_CM2_TO_PER_M2 = 1e4
PER_M2_TO_PER_CM2 = 1e-4
MV_PER_CM_TO_V_PER_M = 1e8
V_PER_M_TO_MV_PER_CM = 1e-8
A_PER_M2_TO_A_PER_CM2 = 1e-4
A_PER_CM2_TO_A_PER_M2 = 1e4
C_PER_M2_TO_C_PER_CM2 = 1e-4
F_PER_M2_TO_F_PER_CM2 = 1e-4
BOLTZMANN_EV_K = BOLTZMANN_J_K / ELEMENTARY_CHARGE_C
SIO2_PERMITTIVITY_FOR_EOT = 3.9  # common practice: EOT = t * 3.9 / eps_r


def thermal_energy_eV(temperature_K: float) -> float:
    """kT in eV."""
    return BOLTZMANN_EV_K * temperature_K


__all__ = [name for name in dir() if name.isupper() or name == "thermal_energy_eV"]
