"""Safety cautions printed with every design and listed in the JSON report (model s.12)."""

CAUTIONS = (
    "Mains: the transformer primary side, fusing and earthing must follow your local "
    "electrical code and be built and checked by a competent person; partpick does not "
    "design or check them.",
    "Heat: heatsinks and output devices run hot enough to burn; allow for the sink "
    "temperature reported here and keep it out of reach.",
    "Loudspeakers: a fault that puts DC on a DC-coupled output destroys loudspeakers; "
    "fit output protection (a DC-detect relay or fuses) and check the offset before "
    "connecting a speaker.",
    "These are design estimates from catalogue data, not a certification: verify "
    "temperatures, SOA and stability on the built amplifier.",
)
