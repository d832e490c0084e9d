"""The high-voltage cautions every report carries."""

CAUTION_LINES = (
    "HT supplies hold lethal voltages, and their capacitors keep a charge long after "
    "switch-off.",
    "Fit a bleeder across the reservoir, fuse the mains and the HT, insulate and earth "
    "every part that can be touched, and measure that a capacitor is discharged before "
    "touching it.",
    "These figures come from a model. They do not say a design is safe: follow your "
    "local electrical codes and licensed practice.",
)

CAUTION_TEXT = " ".join(CAUTION_LINES)
