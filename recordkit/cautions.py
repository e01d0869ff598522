"""Cautions every output carries (from the shared reference's 'Cautions the output must carry')."""

SHORT = ("A record-keeping aid, not an inspection: the maker's instructions, the local fire code and the "
         "authority having jurisdiction (AHJ) decide; where they differ, the local rule wins.")

CAUTIONS = (
    "Records and reminders do not replace the manufacturer's instructions, the local fire code or the "
    "authority having jurisdiction (AHJ); where they differ, the local rule wins.",
    "A passed button test shows the horn and battery work; it does not prove the sensor sees smoke.",
    "Never disable an alarm to silence nuisance alarms; replace or relocate it.",
    "Electrical work on mains (hard-wired) alarms is for a qualified electrician where local law says so.",
    "A listening node is an extra, not a listed fire alarm system, and no substitute for interconnected "
    "alarms or a monitored system where one is required.",
)
