"""The SCPI standard error numbers and texts, and the IEEE 488.2 event-status bit each one sets.

Texts follow SCPI-99 vol. 2 ch. 21 "Error/Event Queue" (from memory; the codes
and short texts are the standard ones every SCPI device reports). A device may
append device-dependent detail after a semicolon inside the quoted text.
"""

from __future__ import annotations

STANDARD_ERRORS: dict[int, str] = {
    0: "No error",
    # -1xx command errors (IEEE 488.2 CME, event status bit 5)
    -100: "Command error",
    -101: "Invalid character",
    -102: "Syntax error",
    -103: "Invalid separator",
    -104: "Data type error",
    -108: "Parameter not allowed",
    -109: "Missing parameter",
    -110: "Command header error",
    -112: "Program mnemonic too long",
    -113: "Undefined header",
    -114: "Header suffix out of range",
    -120: "Numeric data error",
    -131: "Invalid suffix",
    -141: "Invalid character data",
    -151: "Invalid string data",
    # -2xx execution errors (EXE, bit 4)
    -200: "Execution error",
    -221: "Settings conflict",
    -222: "Data out of range",
    -223: "Too much data",
    -224: "Illegal parameter value",
    -230: "Data corrupt or stale",
    -240: "Hardware error",
    # -3xx device-specific errors (DDE, bit 3)
    -300: "Device-specific error",
    -310: "System error",
    -330: "Self-test failed",
    -350: "Queue overflow",
    # -4xx query errors (QYE, bit 2)
    -400: "Query error",
    -410: "Query INTERRUPTED",
    -420: "Query UNTERMINATED",
    -430: "Query DEADLOCKED",
    -440: "Query UNTERMINATED after indefinite response",
}

# IEEE 488.2 standard event status register bits (IEEE 488.2-1992 section 11.5.1).
ESR_OPC = 1  # operation complete
ESR_QYE = 4  # query error
ESR_DDE = 8  # device-dependent error
ESR_EXE = 16  # execution error
ESR_CME = 32  # command error
ESR_PON = 128  # power on


def error_text(code: int) -> str:
    """The standard text for `code`; codes outside the table get the text of their class."""
    if code in STANDARD_ERRORS:
        return STANDARD_ERRORS[code]
    if code > 0:
        return "Device-specific error"
    return STANDARD_ERRORS.get((code // 100) * 100 if code > -100 else -((-code // 100) * 100), "Error")


def esr_bit(code: int) -> int:
    """The event-status bit an error of this class sets (0 for "No error")."""
    if code == 0:
        return 0
    if -199 <= code <= -100:
        return ESR_CME
    if -299 <= code <= -200:
        return ESR_EXE
    if -499 <= code <= -400:
        return ESR_QYE
    return ESR_DDE
