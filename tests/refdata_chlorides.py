"""Outside reference values for the chloride salt systems (NaCl, KCl, CaCl2, MgCl2, FeCl3), plus MgSO4.

Plain constants only. Each block names its source (author, year, table) and says whether the numbers were
"read" (seen in a stored copy of the source or a faithful public copy of it) or "from memory"
(recalled; cross-checked as noted). Where the same numbers also sit in a ``[[data]]`` table with
use = "fit" in wetcycle/salts/data/<Name>.toml, the comment says so: a test against them is then a
re-check of the fit, not an independent test.

Units: molality [mol/kg], temperature [K] unless a name ends in _C, RH as a fraction 0-1,
mass fraction [kg salt / kg solution].
"""

# ---------------------------------------------------------------------------------------------------------
# (a) Osmotic / mean activity coefficients at 25 °C
# ---------------------------------------------------------------------------------------------------------

#: Robinson & Stokes (1959) "Electrolyte Solutions", 2nd ed., Appendix 8.10: NaCl osmotic coefficient at
#: 298.15 K, (molality, phi). Flag: from memory. Cross-check: the Pitzer & Mayorga (1973) 25 °C set reproduces
#: every entry to <= 0.003 (0.0026 at 6 mol/kg). Also in NaCl.toml as a use="test" table (11 of these rows).
RS1959_PHI_NACL_298 = [
    (0.1, 0.9324), (0.2, 0.9245), (0.3, 0.9215), (0.4, 0.9203), (0.5, 0.9209), (0.6, 0.9230),
    (0.7, 0.9257), (0.8, 0.9288), (0.9, 0.9320), (1.0, 0.9355), (1.2, 0.9428), (1.4, 0.9513),
    (1.6, 0.9616), (1.8, 0.9723), (2.0, 0.9833), (2.5, 1.0130), (3.0, 1.0453), (3.5, 1.0790),
    (4.0, 1.1158), (4.5, 1.1530), (5.0, 1.1916), (5.5, 1.2308), (6.0, 1.2706),
]

#: Robinson & Stokes (1959) Appendix 8.10: CaCl2 osmotic coefficient at 298.15 K, (molality, phi).
#: Flag: from memory. Cross-check: 0.1-2.5 mol/kg agree with the Pitzer & Mayorga (1973) set to <= 0.009;
#: 3.0-6.0 could not be cross-checked (beyond that set's range). In CaCl2.toml: 0.1-2.5 as use="test";
#: 3.0-6.0 as use="fit" (re-check of the fit; the fitted model deviates by up to ~0.06 there).
RS1959_PHI_CACL2_298 = [
    (0.1, 0.854), (0.2, 0.862), (0.3, 0.876), (0.4, 0.894), (0.5, 0.917), (0.6, 0.940), (0.7, 0.963),
    (0.8, 0.988), (0.9, 1.017), (1.0, 1.046), (1.2, 1.107), (1.4, 1.171), (1.6, 1.237), (1.8, 1.305),
    (2.0, 1.376), (2.5, 1.568), (3.0, 1.779), (3.5, 1.981), (4.0, 2.182), (4.5, 2.383), (5.0, 2.574),
    (5.5, 2.743), (6.0, 2.891),
]

#: Robinson & Stokes (1959) Appendix 8.10: CaCl2 mean activity coefficient gamma± at 298.15 K.
#: Flag: from memory. Cross-check: Pitzer & Mayorga (1973) set gives 0.520, 0.448, 0.501, 0.802 (<= 1.3 %).
RS1959_GAMMA_CACL2_298 = [(0.1, 0.518), (0.5, 0.448), (1.0, 0.500), (2.0, 0.792)]

#: Robinson & Stokes (1959) Appendix 8.10: MgCl2 mean activity coefficient gamma± at 298.15 K.
#: Flag: from memory. Cross-check: the Pitzer & Mayorga (1973) set (valid to 4.5 mol/kg) gives 0.529, 0.479,
#: 0.570, 1.054, 2.299, 5.51 (<= 1 %). Not in any [[data]] table (independent of the fit).
#: MgCl2 osmotic coefficients are NOT given: the helper's recollection of the R&S phi column above 0.5 mol/kg
#: disagreed with the P&M set (which reproduces these gamma values) by up to 0.15, so it was judged unreliable.
RS1959_GAMMA_MGCL2_298 = [(0.1, 0.529), (0.5, 0.481), (1.0, 0.570), (2.0, 1.053), (3.0, 2.32), (4.0, 5.53)]

#: Robinson & Stokes (1959) Appendix 8.10: MgCl2 osmotic coefficient at 298.15 K, dilute end only.
#: Flag: from memory. Cross-check: P&M (1973) gives 0.863, 0.875, 0.946 (<= 0.003).
RS1959_PHI_MGCL2_298 = [(0.1, 0.861), (0.2, 0.877), (0.5, 0.944)]

#: Robinson & Stokes (1959) Appendix 8.10: MgSO4 osmotic coefficient at 298.15 K, dilute end only.
#: Flag: from memory. Cross-check: Pitzer & Mayorga (1974) 2:2 set gives 0.595, 0.561 (<= 0.006). Higher
#: molalities are not given: the recalled values could not be cross-checked.
RS1959_PHI_MGSO4_298 = [(0.1, 0.590), (0.2, 0.560)]

# ---------------------------------------------------------------------------------------------------------
# (b) Deliquescence RH of the saturated solutions, Greenspan (1977)
# ---------------------------------------------------------------------------------------------------------

#: Greenspan (1977) Table 2: equilibrium RH (fraction) over the saturated solution at t = 0, 5, ..., 40 °C,
#: (temperature_C, rh). Flag: from memory (e.g. NaCl 75.29 %, KCl 84.34 %, MgCl2 32.78 % at 25 °C).
#: Stated uncertainties (Greenspan, from memory): NaCl 0.1-0.3 %RH, KCl 0.25-0.5 %RH, MgCl2 0.13-0.33 %RH.
#: NaCl 5-40 °C and KCl 0-40 °C are use="test" tables (independent of the fit); MgCl2 0-40 °C is a
#: use="fit" table in MgCl2.toml (re-check of the fit). NaCl at 0 °C refers to halite, metastable below 0.1 °C.
GREENSPAN1977_DRH = {
    "NaCl": [(0.0, 0.7552), (5.0, 0.7565), (10.0, 0.7568), (15.0, 0.7561), (20.0, 0.7548), (25.0, 0.7530),
             (30.0, 0.7509), (35.0, 0.7488), (40.0, 0.7469)],
    "KCl": [(0.0, 0.8862), (5.0, 0.8767), (10.0, 0.8678), (15.0, 0.8592), (20.0, 0.8511), (25.0, 0.8435),
            (30.0, 0.8363), (35.0, 0.8295), (40.0, 0.8232)],
    "MgCl2": [(0.0, 0.3367), (5.0, 0.3360), (10.0, 0.3348), (15.0, 0.3330), (20.0, 0.3307), (25.0, 0.3279),
              (30.0, 0.3245), (35.0, 0.3205), (40.0, 0.3161)],
}
GREENSPAN1977_SIGMA = {"NaCl": 0.003, "KCl": 0.005, "MgCl2": 0.0033}

#: CRC Handbook "Constant humidity solutions" (Wexler): RH% = A exp(B/T), T in K, "generally accurate to ±2 %".
#: Flag: read. (A, B, t_min_C, t_max_C). CaCl2·6H2O is a use="test" table in CaCl2.toml (at 15, 20, 25 °C).
CRC_WEXLER_CONSTANT_RH = {
    "CaCl2·6H2O": (0.11, 1653.0, 15.0, 25.0),
    "MgCl2·6H2O": (29.26, 34.0, 5.0, 45.0),
    "NaCl": (69.20, 25.0, 10.0, 40.0),
    "KCl": (49.38, 159.0, 5.0, 25.0),
}

# ---------------------------------------------------------------------------------------------------------
# (c) Freezing-point depression (ice liquidus), CRC Handbook concentrative properties
# ---------------------------------------------------------------------------------------------------------

#: CRC Handbook of Chemistry and Physics, 102nd ed. (2021), "Concentrative properties of aqueous solutions",
#: column Δ (freezing-point depression, °C), (wt_percent, delta_C), up to 15 wt% (MgCl2: the table stops at
#: 5 wt%). Flag: read (a public copy of the CRC table). These rows are ALSO in
#: use="fit" tables of NaCl.toml, CaCl2.toml, MgCl2.toml (re-check of the fit).
CRC_FREEZING_DEPRESSION = {
    "NaCl": [(0.5, 0.30), (1.0, 0.59), (2.0, 1.19), (3.0, 1.79), (4.0, 2.41), (5.0, 3.05), (6.0, 3.70),
             (7.0, 4.38), (8.0, 5.08), (9.0, 5.81), (10.0, 6.56), (11.0, 7.35), (12.0, 8.18), (13.0, 9.04),
             (14.0, 9.94), (15.0, 10.89)],
    "CaCl2": [(0.5, 0.22), (1.0, 0.44), (2.0, 0.88), (3.0, 1.33), (4.0, 1.82), (5.0, 2.35), (6.0, 2.93),
              (7.0, 3.57), (8.0, 4.28), (9.0, 5.04), (10.0, 5.86), (11.0, 6.74), (12.0, 7.70), (13.0, 8.72),
              (14.0, 9.83), (15.0, 11.01)],
    "MgCl2": [(0.5, 0.26), (1.0, 0.52), (2.0, 1.06), (3.0, 1.65), (4.0, 2.30), (5.0, 3.01)],
    "KCl": [(0.5, 0.23), (1.0, 0.46), (2.0, 0.92), (3.0, 1.38), (4.0, 1.85), (5.0, 2.32), (6.0, 2.80),
            (7.0, 3.29), (8.0, 3.80), (9.0, 4.30), (10.0, 4.81), (11.0, 5.33), (12.0, 5.88), (13.0, 6.45)],
    "FeCl3": [(0.5, 0.21), (1.0, 0.39), (2.0, 0.75), (3.0, 1.15), (4.0, 1.56), (5.0, 2.00), (6.0, 2.48),
              (7.0, 2.99), (8.0, 3.57), (9.0, 4.19), (10.0, 4.85), (12.0, 6.38), (14.0, 8.22)],
}

#: Forsythe (1956) Smithsonian Physical Tables, 9th ed., "Freezing point lowering by electrolytes in aqueous
#: solution", as reprinted in CRC Handbook section 15: (molality, delta_C). Flag: read.
#: NaCl: use="test" table in NaCl.toml (independent of the fit); its 0.75 mol/kg entry is ~0.06 K above the
#: CRC concentrative table. KCl: use="fit" table in KCl.toml. The CaCl2 row of this table is NOT used: at
#: 1.0 mol/kg it gives 6.35 K against 5.86 K in the CRC table and ~5.8 K from R&S's 25 °C phi.
FORSYTHE1956_FREEZING = {
    "NaCl": [(0.05, 0.18), (0.10, 0.35), (0.25, 0.85), (0.50, 1.68), (0.75, 2.60)],
    "KCl": [(0.05, 0.17), (0.10, 0.35), (0.25, 0.86), (0.50, 1.68), (0.75, 2.49), (1.00, 3.29), (1.50, 4.88),
            (2.00, 6.50), (2.50, 8.14), (3.00, 9.77)],
}

# ---------------------------------------------------------------------------------------------------------
# (d) Eutectics: (temperature_K, mass_fraction, (solid_1, solid_2), source, flag)
# ---------------------------------------------------------------------------------------------------------

#: All of these are ALSO use="fit" [[data]] rows in the systems' files (re-check of the fit).
EUTECTICS = {
    "NaCl": (251.95, 0.232, ("ice", "NaCl·2H2O"),
             "Oakes, Bodnar & Simonson (1990) Geochim. Cosmochim. Acta 54, 603, abstract (-21.20 ± 0.01 °C, 23.2 wt%)",
             "read"),
    "KCl": (262.45, 0.1975, ("ice", "KCl"),
            "Linke & Seidell (1965) / Hall, Sterner & Bodnar (1988) Econ. Geol. 83, 197 (-10.7 °C, 19.75 wt%)",
            "from memory"),
    "CaCl2": (223.20, 0.3033, ("ice", "CaCl2·6H2O"),
              "Oakes, Bodnar & Simonson (1990) Geochim. Cosmochim. Acta 54, 603, abstract (-49.95 ± 0.15 °C, 30.33 wt%)",
              "read"),
    "MgCl2": (239.55, 0.210, ("ice", "MgCl2·12H2O"),
              "Linke & Seidell (1965); Crawford (1981) (-33.6 °C, ~21 wt%; composition uncertain by ~0.5 wt%)",
              "from memory"),
    "FeCl3": (218.15, 0.331, ("ice", "FeCl3·6H2O"),
              "Roozeboom (1892) as compiled in Linke & Seidell (1958) (~-55 °C, ~33 wt%)",
              "from memory"),
}

#: Other invariant points: (temperature_K, mass_fraction, (solid_1, solid_2), source, flag). Also fitted rows.
PERITECTICS = {
    "NaCl": (273.25, 0.2631, ("NaCl·2H2O", "NaCl"),
             "Salt Institute solubility table: transition point 0.1 °C, 26.31 %", "read"),
    "MgCl2_12H_8H": (256.35, 0.310, ("MgCl2·12H2O", "MgCl2·8H2O"), "Linke & Seidell (1965), -16.8 °C", "from memory"),
    "MgCl2_8H_6H": (269.75, 0.3366, ("MgCl2·8H2O", "MgCl2·6H2O"),
                    "Linke & Seidell (1965), -3.4 °C; composition from the CRC bischofite solubility", "from memory"),
}

# ---------------------------------------------------------------------------------------------------------
# Solubilities (saturated brine composition vs temperature)
# ---------------------------------------------------------------------------------------------------------

#: CRC Handbook, "Aqueous solubility of inorganic compounds at various temperatures", mass %, (temperature_C,
#: wt_percent). Flag: read (a public copy of the CRC table). Solid: NaCl halite (0 °C entry is
#: below the 0.1 °C hydrohalite transition), KCl sylvite, MgCl2·6H2O, CaCl2·6H2O to 25 °C then CaCl2·4H2O
#: (30, 40 °C) and CaCl2·2H2O (50 °C), FeCl3·6H2O to 30 °C. The 0-50 °C rows (CaCl2 0-25 °C, FeCl3 0-30 °C)
#: are use="fit" tables in the systems' files (re-check of the fit).
CRC_SOLUBILITY_WT = {
    "NaCl": [(0, 26.28), (10, 26.32), (20, 26.41), (25, 26.45), (30, 26.52), (40, 26.67), (50, 26.84)],
    "KCl": [(0, 21.74), (10, 23.61), (20, 25.39), (25, 26.22), (30, 27.04), (40, 28.59), (50, 30.04)],
    "MgCl2": [(0, 33.96), (10, 34.85), (20, 35.58), (25, 35.90), (30, 36.20), (40, 36.77), (50, 37.34)],
    "CaCl2": [(0, 36.70), (10, 39.19), (20, 42.13), (25, 44.83), (30, 49.12), (40, 52.85), (50, 56.05)],
    "FeCl3": [(0, 42.7), (10, 44.9), (20, 47.9), (25, 47.7), (30, 51.6)],
}

#: CRC Handbook 98th ed. (2017), "Solubility of common salts at ambient temperatures", NaCl, (temperature_C,
#: molality). Flag: read (public CSV copy). use="test" table in NaCl.toml (independent of the fit).
CRC_SOLUBILITY_MOLALITY_NACL = [(10, 6.110), (15, 6.121), (20, 6.136), (25, 6.153), (30, 6.174), (35, 6.197),
                                (40, 6.222)]
