"""The caution shown beside every envelope status (DESIGN.md, safety wording)."""

CAUTION = ("Planning aid only: these figures support planning and design. Airworthiness and "
           "loading decisions rest on the approved weight-and-balance data, local regulations "
           "and licensed personnel.")
