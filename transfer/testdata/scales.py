#!/usr/bin/python3
"""Reference values for the physical scales of maserpol/transfer
(TestDopplerWidth), computed independently of the Go code and of gonum's
constants. Run from this directory:

    /usr/bin/python3 scales.py > scales.txt

Constants, written out (CODATA 2018, Tiesinga et al. 2021, Rev. Mod. Phys.
93, 025010; k and h exact since the 2019 SI):
  k   = 1.380649e-23 J/K
  h   = 6.62607015e-34 J s
  m_u = 1.66053906660e-27 kg (atomic mass constant)
"""
import math

k = 1.380649e-23
h = 6.62607015e-34
mu = 1.66053906660e-27

# 1/e half-width v_D = sqrt(2 k T / m + v_turb^2), SiO (43.972 amu) at 1000 K.
print("doppler_T1000_m43.972_turb0_m_per_s %.12g" % math.sqrt(2 * k * 1000 / (43.972 * mu)))
print("doppler_T1000_m43.972_turb300_m_per_s %.12g" % math.sqrt(2 * k * 1000 / (43.972 * mu) + 300.0 ** 2))
# T_b dOmega of a beam with R = Gamma: 4 pi h nu Gamma / (A k),
# nu = 43.122 GHz, A = 3e-6 s^-1, Gamma = 1 s^-1.
print("tbdomega_nu43.122e9_A3e-6_gamma1_K_sr %.12g" % (4 * math.pi * h * 43.122e9 * 1.0 / (3e-6 * k)))
