"""Outside reference values for the sulfate and perchlorate salt-water systems.

Plain constants; each carries author, year and table/place, and a flag:
"read" (numbers read from the source or its abstract) or "from memory"
(recalled; treat tolerances accordingly).  Where the same numbers are also a
``use = "fit"`` table in the system's data file, the comment says so: a test on
them is then a re-check of the fit, not an independent validation.

Units: T in K, composition as mass fraction (kg salt / kg solution), RH as a
fraction 0-1 w.r.t. liquid water.
"""

# --------------------------------------------------------------------------
# Eutectics: (T [K], mass fraction, (solid 1, solid 2))
# --------------------------------------------------------------------------

#: MgSO4-H2O, ice + meridianiite, ~-3.6 to -3.9 °C (Hogenboom et al. 1995,
#: Icarus 115, 258; Genceli et al. 2009). Flag: from memory for T; the often
#: quoted ~17 wt% disagrees with the CRC ice liquidus (read: 16 wt% freezes at
#: -3.67 °C), so the composition here is placed on that liquidus (16.2 wt%).
#: Also a fit table in MgSO4.toml (re-check of the fit). Allow ~0.3 K, ~0.01 in w.
EUTECTIC_MGSO4 = (269.4, 0.162, ("ice", "MgSO4·11H2O"))

#: Na2SO4-H2O, ice + mirabilite, -1.2 to -1.3 °C, ~4 wt% (classic diagram,
#: Linke & Seidell 1965). Flag: from memory. Also a fit table in Na2SO4.toml.
EUTECTIC_NA2SO4 = (271.9, 0.040, ("ice", "Na2SO4·10H2O"))

#: NaClO4-H2O, 236 ± 1 K at 52 wt% (Chevrier, Hanley & Altheide 2009, GRL,
#: doi:10.1029/2009GL037497, abstract). Flag: read. Solid at the eutectic taken
#: as the dihydrate (Hennings, Schmidt & Voigt 2013, Z. Anorg. Allg. Chem.,
#: doi:10.1002/zaac.201300040, abstract: dihydrate found with the eutectic).
#: Also a fit table in NaClO4.toml. NOTE: the data file omits the dihydrate (its
#: peritectic was not found) and models this eutectic with NaClO4·H2O: compare
#: T and composition only, not the solid.
EUTECTIC_NACLO4 = (236.0, 0.52, ("ice", "NaClO4·2H2O"))
EUTECTIC_NACLO4_T_UNCERTAINTY = 1.0  # K, as stated by the authors

#: Mg(ClO4)2-H2O, 206 ± 1 K at 44.0 wt% (Chevrier, Hanley & Altheide 2009,
#: abstract). Flag: read (T, composition); solid identity (octahydrate) from
#: memory. Also a fit table in MgClO42.toml. NOTE: the data file omits the
#: octahydrate (no peritectic found) and models the eutectic with the
#: hexahydrate: compare T and composition only. Toner, Catling & Light (2015),
#: GCA 166, 327 (abstract, read) end a frozen Mg-Na-ClO4-rich mixed brine with
#: Mg(ClO4)2·6H2O (not an octahydrate) at its 209 K eutectic; so the octahydrate
#: as the binary eutectic solid stays unconfirmed.
EUTECTIC_MGCLO42 = (206.0, 0.440, ("ice", "Mg(ClO4)2·8H2O"))
EUTECTIC_MGCLO42_T_UNCERTAINTY = 1.0  # K, as stated

#: Independent observation of the same eutectic: a Mg(ClO4)2 brine film froze
#: at -67 °C and thawed at -62 °C (Nikolakakos & Whiteway 2015, GRL 42, 7899,
#: abstract). Flag: read. Held-out ("test") table in MgClO42.toml.
FREEZE_OBSERVED_MGCLO42 = 273.15 - 67.0
THAW_OBSERVED_MGCLO42 = 273.15 - 62.0

#: Ca(ClO4)2-H2O, eutectic ~198 K (Rivera-Valentín et al. 2020, Nature
#: Astronomy, doi:10.1038/s41550-020-1080-9, Extended Data Fig. 3 caption).
#: Flag: read for T; composition ~50 wt% and solid (hexahydrate) from memory
#: (Pestova et al. 2005, Russ. J. Appl. Chem. 78, 409). Also a fit table. NOTE:
#: the data file models it with the tetrahydrate (no 6/4 peritectic found).
EUTECTIC_CACLO42 = (198.0, 0.50, ("ice", "Ca(ClO4)2·6H2O"))

#: Fe2(SO4)3-H2O, 205 ± 1 K at 48 ± 2 wt% (Chevrier & Altheide 2008, GRL 35,
#: L22101, abstract). Flag: read. Solid not identified. No Fe2(SO4)3 data file
#: exists (no citable Pitzer set, liquidus or solubility table was collected).
EUTECTIC_FE2SO43 = (205.0, 0.48, None)

# --------------------------------------------------------------------------
# Peritectics / transitions: (T [K], mass fraction or None, (lower-T solid, higher-T solid))
# --------------------------------------------------------------------------

#: Mirabilite -> thenardite + solution at 32.38 °C, a thermometric fixed point
#: (Linke & Seidell 1965). Flag: from memory. Also a fit table in Na2SO4.toml.
PERITECTIC_NA2SO4 = (305.53, 0.332, ("Na2SO4·10H2O", "Na2SO4"))

#: Meridianiite stable only below ~2 °C (Peterson et al. 2007, Am. Mineral. 92,
#: 1756, via encyclopedia summary). Flag: read (T only). Also a fit table.
PERITECTIC_MGSO4_11_7_T = 275.15

#: Epsomite -> hexahydrite at 48.2 °C (Linke & Seidell 1965). Flag: from memory.
#: Also a fit table.
PERITECTIC_MGSO4_7_6_T = 321.35

# --------------------------------------------------------------------------
# Deliquescence RH at named temperatures: {T [K]: RH}
# --------------------------------------------------------------------------

#: Gough et al. 2011, EPSL 312, 371, abstract. Flag: read.  NaClO4·H2O: 51% at
#: 273 K -> 64% at 228 K (fit table in NaClO4.toml); Mg(ClO4)2·6H2O: 42% at
#: 273 K -> 64% at 223 K (273 K row: fit table in MgClO42.toml; 223 K row: held out,
#: since 0.64 exceeds a_w,ice(223 K) = 0.623 and no model with the 206 K eutectic
#: can reach it); anhydrous NaClO4 ~38%,
#: nearly independent of T (fit table).  Lab DRH by Raman microscopy; the
#: authors' scatter is a few % RH.
DRH_NACLO4_H2O_GOUGH2011 = {273.0: 0.51, 228.0: 0.64}
DRH_MGCLO42_6H2O_GOUGH2011 = {273.0: 0.42, 223.0: 0.64}
DRH_NACLO4_ANHYDROUS_GOUGH2011 = 0.38

#: Gu et al. 2017, RSC Adv. 7, 46866, abstract. Flag: read.
#: Mg(ClO4)2·6H2O: (42.8 ± 0.6)% at 278 K, (40.5 ± 0.5)% at 303 K — held-out
#: ("test") table in MgClO42.toml, an independent check.
#: Ca(ClO4)2·4H2O: (18.5 ± 0.5)% at 278 K, (15.5 ± 0.5)% at 303 K — fit table in
#: CaClO42.toml (re-check of the fit).
DRH_MGCLO42_6H2O_GU2017 = {278.0: 0.428, 303.0: 0.405}
DRH_CACLO42_4H2O_GU2017 = {278.0: 0.185, 303.0: 0.155}

#: Epsomite, Arnold & Zehnder 1991 (as reproduced in SaltWiki "Epsomite",
#: Table 1). Flag: read. Held-out table in MgSO4.toml. These conservation-science
#: values scatter (0.869 at 10 °C below 0.901 at 20 °C) and sit 0.02-0.07 below
#: the a_w of the CRC-saturated solution: use a loose tolerance or treat as
#: informational.
DRH_EPSOMITE_ARNOLD1991 = {283.15: 0.869, 293.15: 0.901, 298.15: 0.883, 303.15: 0.880}

#: Anhydrous Na2SO4 (thenardite, metastable) particles, 25 °C: 84.2%
#: (Tang & Munkelwitz 1994, J. Geophys. Res. 99, 18801). Flag: from memory.
#: Held-out table in Na2SO4.toml.
DRH_THENARDITE_TANG1994 = {298.15: 0.842}

# --------------------------------------------------------------------------
# Efflorescence RH
# --------------------------------------------------------------------------

#: Gough et al. 2011 (abstract): ERH 13% (NaClO4) and 19% (Mg(ClO4)2) at all
#: temperatures studied. Flag: read. Also entered in the data files'
#: [metastability] (not fitted).
ERH_NACLO4_GOUGH2011 = 0.13
ERH_MGCLO42_GOUGH2011 = 0.19

# --------------------------------------------------------------------------
# 25 °C osmotic coefficients
# --------------------------------------------------------------------------
# None read for these salts by this helper (MgSO4: see tests/refdata_chlorides.py).
