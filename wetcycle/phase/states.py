"""Phase states of a salt parcel and their integer codes (CF flag_values / flag_meanings)."""

CRYSTALLINE = 0        # salt solid (a hydrate), no liquid
BRINE = 1              # undersaturated brine, all salt dissolved
SUPERSATURATED = 2     # metastable brine below the DRH, above the efflorescence RH, no crystals
BRINE_WITH_SALT = 3    # saturated brine in contact with salt crystals (deliquescing or drying)
BRINE_WITH_ICE = 4     # brine on the ice liquidus with ice
SUPERCOOLED = 5        # liquid brine below the eutectic, not yet frozen (metastable)
FROZEN = 6             # ice + salt hydrate below the eutectic (no liquid)

NAMES = ("crystalline", "brine", "supersaturated_brine", "brine_with_salt", "brine_with_ice",
         "supercooled_brine", "frozen")
LIQUID = (BRINE, SUPERSATURATED, BRINE_WITH_SALT, BRINE_WITH_ICE, SUPERCOOLED)
FLAG_VALUES = tuple(range(len(NAMES)))
FLAG_MEANINGS = " ".join(NAMES)
