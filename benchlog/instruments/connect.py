"""Opening a bench role from a resource string and a profile, and probing an unknown resource.

`open_role` is how the rest of benchlog gets a Supply, Load or Meter: it opens the
VISA resource with the profile's termination and timeout, reads `*IDN?`, checks it
against the profile's `idn_pattern` and sends the profile's connect commands.
`probe` only asks `*IDN?`: it never changes an instrument's state.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from benchlog.scpi.errors import ScpiReplyError
from benchlog.scpi.replies import Idn, parse_idn

from .errors import NonsenseReply, ProfileError
from .profile import Profile, load_profile, match_idn
from .roles import ROLE_CLASSES, Load, Meter, Supply
from .transport import VisaTransport


def open_role(
    role: str,
    resource: str,
    profile: Profile | str | Path,
    *,
    backend: str = "@py",
    timeout_s: float | None = None,
    check_idn: bool = True,
) -> Supply | Load | Meter:
    """Open `resource` as `role` ('supply', 'load', 'meter') driven by `profile` (object, name or path)."""
    prof = profile if isinstance(profile, Profile) else load_profile(profile)
    if role not in ROLE_CLASSES:
        raise ProfileError("bench", "role", f"is {role!r}", "one of " + ", ".join(ROLE_CLASSES))
    if prof.role != role:
        raise ProfileError(prof.source, "role", f"is {prof.role!r}", f"{role!r}, the role it is opened for")
    transport = VisaTransport(
        resource,
        read_termination=prof.read_termination,
        write_termination=prof.write_termination,
        timeout_s=timeout_s if timeout_s is not None else prof.timeout_s,
        backend=backend,
    )
    try:
        return ROLE_CLASSES[role](transport, prof, check_idn=check_idn)  # type: ignore[return-value]
    except BaseException:
        transport.close()
        raise


@dataclass(frozen=True)
class ProbeResult:
    """What a resource said to `*IDN?` and which profiles recognise it (specific before generic)."""

    resource: str
    idn_text: str
    idn: Idn
    matches: tuple[Profile, ...]


def probe(resource: str, *, backend: str = "@py", timeout_s: float = 2.0, termination: str = "\n") -> ProbeResult:
    """Open `resource`, read `*IDN?`, close; raises TransportError if it cannot be reached."""
    with VisaTransport(resource, read_termination=termination, write_termination=termination,
                       timeout_s=timeout_s, backend=backend) as transport:
        text = transport.query("*IDN?")
    try:
        idn = parse_idn(text)
    except ScpiReplyError:
        raise NonsenseReply("*IDN?", text, "four comma-separated fields", resource=resource) from None
    return ProbeResult(resource, text.strip(), idn, tuple(match_idn(text)))
