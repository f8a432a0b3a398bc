"""The field cautions every answer about live fiber or a break location ends with.

The record can be wrong: a screen that says a strand is dark, that a closure holds nothing
live, or where a break lies, is a starting point for the crew, never a clearance.
"""

from __future__ import annotations

FIELD_VERIFY = (
    "The record can be wrong. Treat every fiber as live until proven dark in the field: check "
    "with a fiber identifier or optical power meter before cutting or moving any strand, and "
    "never look into a fiber end or connector (invisible laser light). Follow local codes, "
    "licensed practice and your operator's own procedures; confined-space and aerial-work "
    "rules apply."
)

CLOSURE_CAUTION = (
    "Opening this closure puts every strand in it at risk, express strands included. "
    + FIELD_VERIFY
)

LOCATE_CAUTION = (
    "This location is computed from the record and an OTDR reading; verify it in the field "
    "(OTDR from both ends where possible, sheath marks at the nearest access points) before "
    "digging. Call for utility locates before any excavation. " + FIELD_VERIFY
)

IMPACT_CAUTION = (
    "Circuits listed come from the record's paths; confirm affected services with the network "
    "operations centre and the equipment's own alarms before telling customers. " + FIELD_VERIFY
)

TRACE_CAUTION = (
    "Lit marks come from the record's active circuits: a strand not marked lit may still carry "
    "light (a test set, an unrecorded patch, a record behind the field). " + FIELD_VERIFY
)
