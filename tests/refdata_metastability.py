"""Outside reference values for metastable brine, solid hydration and kinetics.

Plain constants; each carries author, year and place, and a flag: "read" (numbers read from the
source or its abstract) or "from memory" (recalled).  Where the same numbers are also a
``use = "fit"`` table in a system's data file, the comment says so: a test on them is then a
re-check of the fit, not an independent validation.  Units: T in K, RH and a_w as fractions.
"""

import math

# --------------------------------------------------------------------------
# Water activity of supersaturated (crystal-free) droplets, electrodynamic balance, 298 K
# --------------------------------------------------------------------------

#: NaCl: a_w = 1 + sum c_i x^i, x = wt% (Tang, Tridico & Fung 1997, J. Geophys. Res. 102, 23269;
#: also Tang 1996).  Flag: from memory.  Valid to ~45 wt% (14 mol/kg).  Eight points of it are a fit
#: table in NaCl.toml: a test at other compositions re-checks the fitted branch.
TANG1997_NACL_POLY = (-6.366e-3, 8.624e-5, -1.158e-5, 1.518e-7)
TANG1997_NACL_WT_MAX = 45.0

#: Na2SO4: a_w = 1 + sum c_i x^i, x = wt% (Tang & Munkelwitz 1994, J. Geophys. Res. 99, 18801).
#: Flag: from memory (low confidence on the coefficients; the polynomial agrees with the Pitzer model
#: within 0.003 at 5-40 wt% and gives 0.870 at thenardite saturation).  Also a fit table in Na2SO4.toml.
TM1994_NA2SO4_POLY = (-3.55e-3, 9.63e-5, -2.97e-6)
TM1994_NA2SO4_WT_MAX = 57.0


def poly_aw(coeffs, wt_percent):
    return 1.0 + sum(c * wt_percent ** (i + 1) for i, c in enumerate(coeffs))


# --------------------------------------------------------------------------
# Efflorescence RH of single-salt droplets / particles: (ERH, T of the measurement [K], source, flag)
# --------------------------------------------------------------------------

ERH = {
    # Gough et al. 2011, Earth Planet. Sci. Lett. 312, 371, abstract: 13 % and 19 % at all T
    # studied (223-273 K).  Flag: read.
    "NaClO4": (0.13, (223.0, 273.0), "Gough et al. 2011 (read)"),
    "Mg(ClO4)2": (0.19, (223.0, 273.0), "Gough et al. 2011 (read)"),
    # Gupta, Eom, Cho & Ro 2015, Atmos. Chem. Phys. 15, 11273, abstract: 10.8-9.1 % (dry-deposited
    # hexahydrate) and 10.1-3.2 % (nebulised droplets), room T.  Flag: read; mid-range 0.09.
    "MgCl2": (0.09, (298.15,), "Gupta et al. 2015 (read), mid-range of 3-11 %"),
    # Tang & Munkelwitz 1993/94; Martin 2000 review: NaCl 43-48 %, KCl ~59-62 %, Na2SO4 ~56-59 %
    # at room temperature.  Flag: from memory.
    "NaCl": (0.45, (298.15, 250.0), "Tang & Munkelwitz 1993; Cziczo & Abbatt 2000 to ~240 K (from memory)"),
    "KCl": (0.60, (298.15,), "Martin 2000 review; Freney et al. 2009 (from memory)"),
    "Na2SO4": (0.57, (298.15,), "Tang & Munkelwitz 1994 (from memory)"),
    # Nuding et al. 2014, Icarus 243, 420: Ca(ClO4)2 brines persist to ~15 % (from memory, low).
    "Ca(ClO4)2": (0.15, (250.0,), "Nuding et al. 2014 (from memory)"),
}

# --------------------------------------------------------------------------
# Solid-state hydration equilibria
# --------------------------------------------------------------------------

#: Epsomite = hexahydrite + H2O(g): ln K = 20.001 - 7182.07/T, K = f_H2O [bar], 25-45 °C, +-0.012 in
#: ln K (Chou & Seal 2003, Astrobiology 3, 619, abstract).  Flag: read.  Also a fit table in MgSO4.toml.
def chou_seal_2003_fh2o_pa(T):
    return math.exp(20.001 - 7182.07 / T) * 1e5


CHOU_SEAL_2003_RANGE = (298.15, 318.15)
#: Before this work the model put this equilibrium at RH 0.754 at 25 °C (issue 10's "more than 0.2 away").
MGSO4_7_6_RH_BEFORE = 0.754

#: Thenardite + 10 H2O = mirabilite, ~75-80 % RH at 20 °C (Steiger & Asmussen 2008, Geochim.
#: Cosmochim. Acta 72, 4291, phase diagram).  Flag: from memory (low).  A held-out test table.
NA2SO4_HYDRATION_20C = (293.15, 0.775, 0.03)

# --------------------------------------------------------------------------
# Ice nucleation in metastable brine
# --------------------------------------------------------------------------

#: Ca(ClO4)2 solutions persist metastably to RH_ice = 145 % (Rivera-Valentin et al. 2020, Nat.
#: Astron. 4, 756, Extended Data Fig. 3).  Flag: read.
RIVERA_VALENTIN_2020_RH_ICE_MAX = 1.45
#: Homogeneous ice nucleation of ~um solution droplets on ~minute time scales at
#: a_w - a_w,ice(T) = 0.305, independent of the solute (Koop, Luo, Tsias & Peter 2000, Nature 406,
#: 611).  Flag: the solute independence read (abstract), the 0.305 from memory.
KOOP2000_DELTA_AW = 0.305
#: Salt solutions typically supercool ~15 K below their freezing point before crystallising (Toner,
#: Catling & Light 2014, Icarus 233, 36, as summarised in the NAI 2015 report).  Flag: read.
TONER2014_SUPERCOOLING_K = 15.0

# --------------------------------------------------------------------------
# Deliquescence below the eutectic, kinetics
# --------------------------------------------------------------------------

#: NaClO4.H2O deliquesced at 228 K (DRH 64 %): Gough et al. 2011 (read); NaClO4-H2O eutectic 236 +- 1 K:
#: Chevrier, Hanley & Altheide 2009 (read).
GOUGH2011_NACLO4_H2O_DRH_228K = (228.0, 0.64)
CHEVRIER2009_NACLO4_EUTECTIC = 236.0
#: Salts in contact with water ice form brine "in minutes" above the eutectic; from vapour alone bulk
#: deliquescence is "not rapid enough" for the daily window (Fischer, Martinez, Elliott & Renno 2014,
#: Geophys. Res. Lett. 41, 4456, abstract).  Flag: read (qualitative).
FISCHER2014_ICE_CONTACT_S = 30 * 60.0     # "minutes": taken as within half an hour
FISCHER2014_VAPOUR_WINDOW_S = 3 * 3600.0  # "short periods of the day": a few hours
