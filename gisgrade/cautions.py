"""The cautions every output carries (README, --help, summary, plots)."""

CAUTIONS = (
    "Planning-level results from public terrain data; not for construction. "
    "Verify existing utilities by records and field location, elevations by survey, "
    "and the design against local codes, the utility's standards and a licensed "
    "professional engineer."
)

SHORT = "Planning level only - verify by survey, local codes and a licensed engineer."
