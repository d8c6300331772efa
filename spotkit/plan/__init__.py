"""Planning an experiment and checking it afterwards: switching schedules, how long to
run, and a finished run audited against its schedule.
"""

from spotkit.plan.audit import (
    FINDINGS,
    MARKERS,
    AuditResult,
    audit_schedule,
)
from spotkit.plan.duration import (
    DEFAULT_PILOT,
    PAIRED_DESIGNS,
    PLAN_DESIGNS,
    SIM_DESIGNS,
    DurationEstimate,
    PilotParameters,
    censoring_information,
    duration_by_simulation,
    duration_closed_form,
    duration_from_pilot,
    duration_table,
    pairs_needed,
    pilot_parameters,
    power_closed_form,
    power_from_pilot,
    simulate_default_pilot,
)
from spotkit.plan.schedule import (
    ANTENNAS,
    HOUR_UTC,
    expand_schedule,
    make_schedule,
    schedule_balance,
    slots_per_hour,
    write_schedule,
)

__all__ = [
    "ANTENNAS", "HOUR_UTC", "slots_per_hour", "make_schedule", "write_schedule",
    "schedule_balance", "expand_schedule", "SIM_DESIGNS", "pairs_needed",
    "censoring_information", "DurationEstimate", "duration_closed_form",
    "power_closed_form", "PAIRED_DESIGNS", "PLAN_DESIGNS", "DEFAULT_PILOT",
    "PilotParameters", "pilot_parameters", "simulate_default_pilot", "power_from_pilot",
    "duration_from_pilot", "duration_by_simulation", "duration_table", "MARKERS", "FINDINGS",
    "AuditResult", "audit_schedule",
]
