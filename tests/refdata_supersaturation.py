"""Outside reference values for supersaturated (metastable) brines at 25 °C, and efflorescence RH.

Plain constants only. Each block names its source and says whether the numbers were "read" (seen in a
stored copy of the source or a faithful public copy of it) or "from memory". Where the same numbers sit in
a ``[[data]]`` table of wetcycle/salts/data/<Name>.toml the comment says whether that table is
use = "test" (held out: an independent check) or use = "fit" (a test is then a re-check of the fit).

Where a paper gives a fit formula rather than a table, the points below are that formula evaluated by the
project at molalities inside the paper's stated range (said beside each block).

Units: molality [mol/kg], temperature [K], water activity and RH as fractions 0-1.

Tests that should use them (to be written by the lead):

* ``tests/test_salt_references.py``: NaCl water activity at 298.15 K in the supersaturated range
  6.5-8.0 mol/kg against ``TANG1997_AW_NACL_298`` and ``CLEGG1997_AW_NACL_298`` (both held out of the
  fit), tolerance 0.01 in a_w (the data's stated uncertainty: Chan et al. 1997 give 0.01-0.02 in mass
  fraction, i.e. 0.015-0.03 in a_w here). The fixed 25 °C Pitzer set deviates by -0.001 to -0.010, so
  the check passes but has almost no slack at 8.0 mol/kg; 0.012 would be a fair tolerance too.
* ``tests/test_salt_registry.py`` or a phase-state test: ``m_max`` of NaCl, KCl and Na2SO4 lies above
  halite / sylvite / thenardite saturation at 298.15 K (so a drying brine can be supersaturated), and
  the efflorescence RH values below are what the data files give (``EFFLORESCENCE_RH``).
* Optional: that ``s.water_activity(s.m_max, 298.15)`` for NaCl is still above the efflorescence RH
  (0.66 > 0.45), documenting that the model's validity ends before efflorescence: a drying NaCl brine
  reaches m_max first (a known limit, stated in NaCl.toml notes).
"""

# ---------------------------------------------------------------------------------------------------------
# (a) NaCl water activity of supersaturated solutions at 298.15 K, (molality, a_w)
# ---------------------------------------------------------------------------------------------------------

#: Tang, Tridico & Fung (1997) J. Geophys. Res. 102, 23269: the authors' fit
#: a_w = 1 - 6.366e-3 x + 8.624e-5 x^2 - 1.158e-5 x^3 + 1.518e-7 x^4 (x = wt% NaCl), evaluated at
#: 27.5-31.9 wt%. Flag: read (coefficients read in public code labelled "Tang polynomial, NaCl"; the
#: attribution to this paper is from memory). Held out: NaCl.toml table 12, use="test".
TANG1997_AW_NACL_298 = [(6.5, 0.7357), (7.0, 0.7123), (7.5, 0.6893), (8.0, 0.6666)]

#: Clegg, Brimblecombe, Liang & Chan (1997) Aerosol Sci. Technol. 27, 345 (part II; pages from memory):
#: the authors' mole-fraction (Pitzer-Simonson-Clegg) fit to the electrodynamic-balance data of Chan et
#: al. (1997) Aerosol Sci. Technol. 27, 324 and bulk data, NaCl parameters (A_x = 2.915, rho = 13,
#: B = 24.22023, alpha = 5, W1 = 0.7945378, U1 = 12.15304, V1 = -12.76357), evaluated by the project.
#: Flag: read (parameters read from a public transcription, ovinc/aquasol; the evaluation reproduces
#: Robinson & Stokes' phi = 1.2706 at 6 mol/kg to 0.0002). Held out: NaCl.toml table 13, use="test".
CLEGG1997_AW_NACL_298 = [(6.5, 0.7367), (7.0, 0.7137), (7.5, 0.6909), (8.0, 0.6685)]

#: Tang, Munkelwitz & Wang (1986) J. Colloid Interface Sci. 114, 409: the authors' extended Debye-Hückel fit
#: of phi (NaCl: A = 0.5108, B = 1.37, beta = 2.796e-2, C = 4.803e-3, D = -2.736e-4), evaluated by the
#: project. Flag: read (public transcription, ovinc/aquasol). USED BY THE FIT (NaCl.toml table 11): a test
#: against it is a re-check. Listed for comparison: the three NaCl sources agree to <= 0.002 here.
TANG1986_AW_NACL_298 = [(6.5, 0.7372), (7.0, 0.7138), (7.5, 0.6906), (8.0, 0.6676)]

# ---------------------------------------------------------------------------------------------------------
# (b) KCl and Na2SO4: the only supersaturated data found are also the fitted tables (no independent set)
# ---------------------------------------------------------------------------------------------------------

#: Tang, Munkelwitz & Wang (1986), KCl fit (A = 0.5108, B = 1.35, beta = -9.842e-3, C = 7.625e-3,
#: D = -7.892e-4, E = 2.492e-5), evaluated by the project. Flag: read (public transcription). USED BY
#: THE FIT (KCl.toml, use="fit"): re-check only.
TANG1986_AW_KCL_298 = [(5.0, 0.8352), (6.0, 0.8010), (7.0, 0.7679), (8.0, 0.7365), (8.5, 0.7216)]

#: Clegg et al. (1997) part II, Na2SO4 parameters (A_x = 2.915, rho = 13, B = 48.56028, alpha = 8,
#: W1 = 5.555706, U1 = 21.88352, V1 = -22.81674), evaluated by the project. Flag: read (public
#: transcription). USED BY THE FIT (Na2SO4.toml, use="fit"): re-check only.
CLEGG1997_AW_NA2SO4_298 = [(4.0, 0.8486), (5.0, 0.7979), (5.5, 0.7725), (5.7, 0.7624)]

# ---------------------------------------------------------------------------------------------------------
# (c) Efflorescence RH (fraction), room temperature
# ---------------------------------------------------------------------------------------------------------

#: (name, efflorescence RH as in the data file, (low, high) of the cited range, source, flag)
EFFLORESCENCE_RH = [
    # Gupta, Eom, Cho & Ro (2015) Atmos. Chem. Phys. 15, 11273, abstract (read): MgCl2·6H2O particles
    # 10.8-9.1 % RH, nebulised MgCl2 10.1-3.2 % RH.
    ("MgCl2", 0.09, (0.032, 0.108), "Gupta et al. 2015 ACP 15, 11273, abstract", "read"),
    # NaCl 43-48 % RH (Tang & Munkelwitz 1993; Martin 2000 review). Not re-read in this round.
    ("NaCl", 0.45, (0.43, 0.48), "Tang & Munkelwitz 1993; Martin 2000 Chem. Rev. 100, 3403", "from memory"),
    # KCl ~59-62 % RH (Martin 2000 review; Freney et al. 2009). Not re-read.
    ("KCl", 0.60, (0.59, 0.62), "Martin 2000; Freney, Martin & Buseck 2009", "from memory"),
    # Na2SO4 ~56-59 % RH (Tang & Munkelwitz 1994). Not re-read.
    ("Na2SO4", 0.57, (0.56, 0.59), "Tang & Munkelwitz 1994 J. Geophys. Res. 99, 18801", "from memory"),
]
