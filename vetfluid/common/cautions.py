"""The cautions every screen, printout and CLI answer carries."""

CAUTIONS = (
    "Decision support for veterinary professionals only — not a substitute for clinical judgement.",
    "Verify every volume, rate and additive before giving it.",
    "Reassess the patient often (weight, perfusion, urine output, electrolytes) and re-plan.",
    "Local regulations and your practice's protocols prevail over anything shown here.",
    "Values marked 'memory' were recalled, not checked against a publication.",
)

SHORT_CAUTION = (
    "Decision support for veterinary professionals · verify before giving · reassess often · "
    "local regulations and practice protocols prevail"
)
