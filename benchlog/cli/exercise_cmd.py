"""`benchlog profiles probe RESOURCE --exercise`: every operation of a profile sent once with the outputs off.

Exit codes: 0 the instrument accepted every operation; 1 it refused one or
did not answer (each is printed with the instrument's error code and text);
2 bad input (unknown profile, an instrument that does not match the profile,
a nonsense reply to the error query); 75 the resource is in use by another
session (its instrument lock is taken before the first command, `*IDN?`
included, as a sweep takes it; nothing is sent then).
"""

from __future__ import annotations

import sys

from benchlog.badinput import BadInput

from .output import print_json

EXIT_OK, EXIT_FAILED = 0, 1


def _pick_profile(args):
    from benchlog.instruments.connect import probe
    from benchlog.instruments.profile import load_profile

    if args.profile is not None:
        return load_profile(args.profile)
    found = probe(args.resource, backend=args.backend, timeout_s=args.timeout or 2.0)
    if not found.matches:
        raise BadInput("argument", "RESOURCE", f"no profile matches the *IDN? reply {found.idn_text!r}",
                       "--profile NAME_OR_PATH naming the profile to exercise")
    return found.matches[0]  # specific profiles come before generic ones


def _note(text: str) -> None:
    sys.stderr.write(f"benchlog: note: {text}\n")


def _notice(text: str) -> None:
    """An output found on at connect: said at once, before it is switched off (also with --json)."""
    sys.stderr.write(f"benchlog: {text}\n")
    sys.stderr.flush()


def _at_connect(result) -> str:
    """What the state query said when the link opened, and after the first off command."""
    role = result.profile.role
    if role == "meter":
        return ""
    what = "input" if role == "load" else "output"
    if result.found_on is None:
        return f"{what} not read at connect (the profile has no state query)"
    if not result.found_on:
        return f"{what} off at connect"
    if result.on_after_off is False:
        return f"{what} ON at connect; switched off (read back)"
    return f"{what} ON at connect; NOT confirmed off -- switch it off by hand now"


def exercise_resource(args) -> int:
    from benchlog.instruments.benchlock import BenchLock
    from benchlog.instruments.errors import TransportError
    from benchlog.instruments.exercise import exercise
    from benchlog.instruments.transport import VisaTransport

    try:
        with BenchLock([args.resource], on_note=_note):  # BenchInUse -> exit 75 before anything is sent
            profile = _pick_profile(args)
            with VisaTransport(args.resource, read_termination=profile.read_termination,
                               write_termination=profile.write_termination,
                               timeout_s=args.timeout or profile.timeout_s, backend=args.backend) as transport:
                result = exercise(transport, profile, on_notice=_notice)
    except TransportError as exc:
        sys.stderr.write(f"benchlog: {exc} (is the instrument on, and is the address right?)\n")
        return EXIT_FAILED
    refused = result.refused
    if args.json:
        print_json({
            "resource": result.resource,
            "profile": {"name": profile.name, "role": profile.role, "file": str(profile.path or "")},
            "idn": result.idn_text,
            "found_on_at_connect": result.found_on,
            "confirmed_off_after_connect": None if result.on_after_off is None else not result.on_after_off,
            "earlier_errors": [{"code": e.code, "text": e.text} for e in result.earlier_errors],
            "operations": [{"operation": t.operation, "command": t.command, "outcome": t.outcome,
                            "reply": t.reply, "note": t.note,
                            "errors": [{"code": e.code, "text": e.text} for e in t.errors]}
                           for t in result.trials],
            "refused": len(refused),
        })
        return EXIT_FAILED if refused else EXIT_OK
    print(f"resource  {result.resource}")
    print(f"profile   {profile.name} ({profile.role}){' ' + str(profile.path) if profile.path else ''}")
    print(f"idn       {result.idn_text}")
    state = _at_connect(result)
    if state:
        print(f"state     {state}")
    if result.earlier_errors:
        listed = "; ".join(f"{e.code},\"{e.text}\"" for e in result.earlier_errors)
        print(f"earlier   queued before we connected (not ours): {listed}")
    width = max((len(t.operation) for t in result.trials), default=10)
    for t in result.trials:
        status = {"accepted": "accepted", "not sent": "not sent"}.get(t.outcome, "REFUSED" if t.outcome == "refused"
                                                                     else t.outcome.upper())
        detail = t.describe()
        print(f"{status:<11} {t.operation:<{width}}  {t.command}" + (f"  -> {detail}" if detail else ""))
    sent = [t for t in result.trials if t.outcome != "not sent"]
    print(f"{len(sent) - len(refused)} of {len(sent)} operations accepted"
          + (f"; {len(refused)} refused or unanswered: fix the profile's command forms before a sweep"
             if refused else ""))
    return EXIT_FAILED if refused else EXIT_OK
