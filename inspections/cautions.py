"""The safety cautions of checklists and repair work, and the one rule that lists them in a safety box.

Lockout and tagout comes first wherever work can hurt someone (fans, electric heaters, hot coils); local
codes, the manufacturer's instructions and licensed practice take precedence, said last. Common practice,
no published source.
"""

from __future__ import annotations

from scheduling.library import SHUT_COIL_FREEZE

LOCKOUT = (
    "Lock out and tag out the fan motor (and any electric heater) and prove it dead before opening an "
    "access door: fans coast for minutes after switch-off."
)
HOT_COILS = "Heating coils, their valves and pipework can be hot enough to burn; let them cool or wear gloves."
LOCAL_CODES = "Local codes, the manufacturer's instructions and licensed practice take precedence over this checklist."
ELECTRIC = (
    "Electric preheaters are live at mains voltage: only a qualified person tests stages, "
    "with the heater isolated except for the test itself."
)
# Proving a preheater's stages on a mild day goes through its controller, never around its safeties (NFPA 70 (NEC)
# 424.63/424.64 require the airflow interlock and the limits; their being bypassed is how duct heaters start fires:
# common practice).
HEATER_SAFETIES = (
    "Never bypass or jumper an electric heater's high-limit cut-outs or its airflow interlock, not even for a test: "
    "make a stage call through its controller (test mode, a lowered set point or a simulated sensor input) and put "
    "everything back as found."
)
# Proving a fan means stopping and starting it with the unit live, so lockout cannot cover the test itself.
RUNNING_FAN = (
    "Fans under test start and stop under control (schedule, building automation, fire and smoke "
    "controls) without warning: keep access doors shut while the fan can run, keep clear of belts, "
    "shafts and impellers, and lock out and tag out before reaching inside."
)
LOADED_FILTERS = (
    "Wear eye and hand protection when handling loaded filters: bag used filters at the unit "
    "so the dust they hold stays in."
)
# A valve held shut with cold outdoor air on its coil (the leak-by test): the task library's words, one place.
SHUT_COIL_COLD_AIR = SHUT_COIL_FREEZE
GENERAL_CAUTIONS = [LOCKOUT, HOT_COILS, LOCAL_CODES]
# Water and steam coils: common practice (no published source), as the other cautions here.
PRESSURISED_COILS = (
    "Coils and their pipework hold hot water or steam under pressure: close and lock both isolating valves "
    "and let the pressure off before opening a joint, vent or drain."
)
# The cautions of work on one kind of part, where repair work is proposed or looked into (before its checklist
# exists); any other kind sits in the airstream beside the fan, so lockout first.
COMPONENT_CAUTIONS: dict[str, list[str]] = {
    "fan": [LOCKOUT, RUNNING_FAN],
    "electric_preheater": [LOCKOUT, ELECTRIC, HEATER_SAFETIES, HOT_COILS],
    "coil": [LOCKOUT, HOT_COILS, PRESSURISED_COILS],
    "humidifier": [LOCKOUT, HOT_COILS],
}


def cautions_once(*, lists: list[list[str]]) -> list[str]:
    """Every caution of ``lists`` once, in first-seen order; the local-codes-first line last.

    The one rule for a safety box: the phone's checklist, its page and the inspection PDF all
    list cautions through it, so a caution repeated by several templates reads once.
    """
    seen: list[str] = []
    for texts in lists:
        for text in texts:
            if text and text not in seen:
                seen.append(text)
    codes = [c for c in seen if "local code" in c.lower()] or [LOCAL_CODES]
    return [c for c in seen if c not in codes] + codes[:1]
