"""Talking to real instruments: transport over pyvisa, profiles, the Supply/Load/Meter roles, the safe-state guard.

Imports only `benchlog.scpi` (and pyvisa, lazily, when a resource is opened).
"""

from .connect import ProbeResult, open_role, probe
from .errors import (
    BenchError,
    ConnectionLost,
    InstrumentError,
    InstrumentTimeout,
    NonsenseReply,
    ProfileError,
    SafeStateFailed,
    SafetyLimit,
    TransportError,
    WrongInstrument,
)
from .guard import Terminated, reach_safe_state, safe_state_guard
from .profile import (
    AccuracySpec,
    Limits,
    ModeDecoding,
    Profile,
    list_profiles,
    load_profile,
    match_idn,
    parse_profile,
    profile_dirs,
    read_profile,
    scan_profiles,
)
from .roles import Load, Meter, Role, Supply
from .transport import Transport, VisaTransport

__all__ = [
    "AccuracySpec", "BenchError", "ConnectionLost", "InstrumentError", "InstrumentTimeout", "Limits", "Load",
    "Meter", "ModeDecoding", "NonsenseReply", "ProbeResult", "Profile", "ProfileError", "Role", "SafeStateFailed",
    "SafetyLimit", "Supply", "Terminated", "Transport", "TransportError", "VisaTransport", "WrongInstrument",
    "list_profiles", "load_profile", "match_idn", "open_role", "parse_profile", "probe", "profile_dirs",
    "reach_safe_state", "read_profile", "safe_state_guard", "scan_profiles",
]
