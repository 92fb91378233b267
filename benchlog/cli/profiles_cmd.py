"""Subcommands `benchlog profiles list | check FILE... | probe RESOURCE [--exercise] | scan`: profiles and identification.

Exit codes: `check` 0 when every file is a valid profile, 2 otherwise (one line
per broken file: file, key, problem, expectation). `probe` 0 when the resource
answered `*IDN?` (whether or not a profile matches), 1 when it could not be
reached or did not answer in time, 2 for a malformed resource string or a reply
that is not a four-field `*IDN?`. `probe --exercise` 0 when the instrument
accepted every operation, 1 when it refused one (or did not answer), 2 for bad
input (no such profile, an instrument that does not match it). `scan` 0 when
every resource found answered `*IDN?` or is in use by another session, 1 when
one did not answer or none was found.

One sweep per bench holds here too: `probe` (with or without `--exercise`) takes
the resource's instrument lock (`instruments.benchlock`, the one sweeps and the UI
take) before its first command, and a resource in use is refused at once naming
the holder, exit 75. Even a read-only `*IDN?` is not sent to an instrument a sweep
holds: its reply would interleave with the sweep's on the same instrument. `scan`
takes each resource's lock for its probe, and lists a locked one as "in use by PID
... on HOST since ..." without sending it anything.
"""

from __future__ import annotations

import sys

from benchlog.badinput import BadInput

from .output import print_json

EXIT_OK, EXIT_FAILED, EXIT_BAD_INPUT = 0, 1, 2


def register(sub) -> None:
    """Add `profiles` and its subcommands to the `benchlog` parser."""
    parser = sub.add_parser("profiles", help="list, check and match instrument profiles")
    parser.set_defaults(handler=lambda args: (parser.print_help(), EXIT_BAD_INPUT)[1])
    actions = parser.add_subparsers(dest="profiles_command", metavar="ACTION", parser_class=type(parser))

    listing = actions.add_parser("list", help="list the profiles found (name, role, file)")
    listing.add_argument("--json", action="store_true", help="print JSON instead of a table")
    listing.set_defaults(handler=_list)

    check = actions.add_parser("check", help="validate profile files")
    check.add_argument("files", nargs="+", metavar="FILE", help="profile file(s) to check")
    check.add_argument("--json", action="store_true", help="print JSON results")
    check.set_defaults(handler=_check)

    probe = actions.add_parser("probe", help="ask a resource for *IDN? and name the profiles that match")
    probe.add_argument("resource", metavar="RESOURCE", help="VISA resource, e.g. TCPIP0::127.0.0.1::5025::SOCKET")
    probe.add_argument("--exercise", action="store_true",
                       help="with the outputs off, send every operation of the profile once and report what the "
                            "instrument accepted or refused (its error code and text)")
    probe.add_argument("--profile", metavar="NAME_OR_PATH",
                       help="the profile to exercise (default: the first one whose *IDN? pattern matches)")
    probe.add_argument("--backend", default="@py", help="pyvisa backend (default @py = pyvisa-py)")
    probe.add_argument("--timeout", type=float, default=None, metavar="S",
                       help="reply timeout in seconds (default 2; with --exercise, the profile's)")
    probe.add_argument("--json", action="store_true", help="print JSON instead of text")
    probe.set_defaults(handler=_probe)

    scan = actions.add_parser("scan", help="list the VISA resources the installed backends see and ask each *IDN?")
    scan.add_argument("--resource", action="append", default=[], metavar="RESOURCE",
                      help="also probe this resource (raw-socket LAN instruments cannot be discovered); repeatable")
    scan.add_argument("--lan", action="store_true",
                      help="also look for LAN instruments (sends a VXI-11 broadcast on the local network)")
    scan.add_argument("--backend", default="@py", help="pyvisa backend (default @py = pyvisa-py)")
    scan.add_argument("--timeout", type=float, default=2.0, metavar="S",
                      help="reply timeout per resource in seconds (default 2)")
    scan.add_argument("--json", action="store_true", help="print JSON instead of text")
    scan.set_defaults(handler=_scan)


def _list(args) -> int:
    from benchlog.instruments.profile import scan_profiles

    profiles, broken = scan_profiles()
    for error in broken:  # a broken file in a profile folder is skipped, but never silently
        sys.stderr.write(f"benchlog: skipped {error.line()}\n")
    if args.json:
        print_json([{"name": p.name, "role": p.role, "generic": p.generic, "file": str(p.path)} for p in profiles])
        return EXIT_OK
    if not profiles:
        sys.stderr.write("benchlog: no instrument profiles found\n")
        return EXIT_FAILED
    width = max(len(p.name) for p in profiles)
    for p in profiles:
        print(f"{p.name:<{width}}  {p.role:<6}  {p.path}")
    return EXIT_OK


def _check(args) -> int:
    from benchlog.instruments.profile import read_profile

    results = []
    for file in args.files:
        try:
            profile = read_profile(file)
        except BadInput as exc:
            results.append({"file": file, "ok": False, "error": exc.line()})
            if not args.json:
                sys.stderr.write(f"benchlog: {exc.line()}\n")
            continue
        results.append({"file": file, "ok": True, "name": profile.name, "role": profile.role,
                        "sha256": profile.sha256})
        if not args.json:
            print(f"ok: {profile.name} ({profile.role})")
    if args.json:
        print_json(results)
    return EXIT_OK if all(r["ok"] for r in results) else EXIT_BAD_INPUT


def _probe(args) -> int:
    from benchlog.instruments.connect import probe
    from benchlog.instruments.errors import TransportError

    _check_resource(args.resource)
    if args.timeout is not None and not 0.05 <= args.timeout <= 600:
        raise BadInput("argument", "--timeout", f"is {args.timeout:g}", "seconds between 0.05 and 600")
    if args.profile is not None and not args.exercise:
        raise BadInput("argument", "--profile", "is given without --exercise", "--exercise --profile NAME_OR_PATH")
    if args.exercise:
        from .exercise_cmd import exercise_resource

        return exercise_resource(args)
    try:
        with resource_lock(args.resource):  # BenchInUse -> exit 75, nothing sent
            result = probe(args.resource, backend=args.backend, timeout_s=args.timeout or 2.0)
    except TransportError as exc:
        sys.stderr.write(f"benchlog: {exc} (is the instrument on, and is the address right?)\n")
        return EXIT_FAILED
    if args.json:
        print_json({
            "resource": result.resource,
            "idn": {"manufacturer": result.idn.manufacturer, "model": result.idn.model,
                    "serial": result.idn.serial, "firmware": result.idn.firmware},
            "matches": [{"name": p.name, "role": p.role, "generic": p.generic, "file": str(p.path)}
                        for p in result.matches],
        })
        return EXIT_OK
    print(f"resource      {result.resource}")
    print(f"manufacturer  {result.idn.manufacturer}")
    print(f"model         {result.idn.model}")
    print(f"serial        {result.idn.serial}")
    print(f"firmware      {result.idn.firmware}")
    specific = [p for p in result.matches if not p.generic]
    generic = [p for p in result.matches if p.generic]
    if specific:
        print("matches       " + ", ".join(f"{p.name} ({p.role})" for p in specific))
    if generic:
        print("generic       " + ", ".join(f"{p.name} ({p.role})" for p in generic))
    if not result.matches:
        print("matches       none; write a profile for it (see docs/adding-a-profile.md)")
    return EXIT_OK


def _scan(args) -> int:
    from benchlog.instruments.connect import probe
    from benchlog.instruments.discovery import list_resources, missing_extras
    from benchlog.instruments.errors import BenchError, BenchInUse

    if not 0.05 <= args.timeout <= 60:
        raise BadInput("argument", "--timeout", f"is {args.timeout:g}", "seconds between 0.05 and 60")
    for resource in args.resource:
        _check_resource(resource)
    missing = missing_extras()
    for extra in missing:
        sys.stderr.write(f"benchlog: note: {extra.line()}\n")
    try:
        listed = list_resources(args.backend, lan=args.lan)
    except BenchError as exc:
        sys.stderr.write(f"benchlog: {exc}\n")
        return EXIT_FAILED
    resources = list(dict.fromkeys([*listed, *args.resource]))
    found = []
    for resource in resources:
        entry = {"resource": resource, "listed": resource in listed, "in_use": False}
        try:
            with resource_lock(resource):
                result = probe(resource, backend=args.backend, timeout_s=args.timeout)
        except BenchInUse as exc:  # another session drives it: not asked anything, its holder named
            holder = exc.holder
            entry.update(answered=False, problem=holder.in_use() if holder is not None else exc.message,
                         in_use=exc.message.startswith("in use"))  # not a lock folder that cannot be written
            if holder is not None:
                entry["holder"] = {"pid": holder.pid, "host": holder.host, "command": holder.command,
                                   "started_utc": holder.started_utc}
        except BenchError as exc:  # unreachable, no answer in time, or not an *IDN? reply
            entry.update(answered=False, problem=str(exc))
        else:
            entry.update(answered=True, idn=result.idn_text,
                         matches=[{"name": p.name, "role": p.role, "generic": p.generic} for p in result.matches])
        found.append(entry)
    if args.json:
        print_json({"resources": found, "missing_extras": [{"extra": m.extra, "package": m.package,
                                                            "buses": m.buses} for m in missing]})
    else:
        if not resources:
            print("no VISA resources found by the installed backends"
                  + ("" if args.lan else " (LAN instruments: --lan, or --resource for a raw socket)"))
        width = max((len(e["resource"]) for e in found), default=0)
        for e in found:
            if e["answered"]:
                names = ", ".join(f"{m['name']} ({m['role']})" for m in e["matches"]) or "no profile matches"
                print(f"{e['resource']:<{width}}  {e['idn']}  -> {names}")
            elif e["in_use"]:
                print(f"{e['resource']:<{width}}  {e['problem']}; not probed")
            else:
                print(f"{e['resource']:<{width}}  no answer: {e['problem']}")
    unanswered = [e for e in found if not e["answered"] and not e["in_use"]]
    return EXIT_OK if found and not unanswered else EXIT_FAILED


def resource_lock(resource: str):
    """The resource's instrument lock, as a sweep takes it; a lock left by a dead process is taken over with a note.

    Raises BenchInUse (exit 75) when another session holds it: nothing is sent then.
    """
    from benchlog.instruments.benchlock import BenchLock

    return BenchLock([resource], on_note=lambda note: sys.stderr.write(f"benchlog: note: {note}\n"))


def _check_resource(resource: str) -> None:
    """A malformed VISA resource string is bad input (exit 2), not an unreachable instrument."""
    try:
        from pyvisa import rname

        parsed = rname.ResourceName.from_string(resource)
        port = getattr(parsed, "port", None)
        if port is not None and not (str(port).isdigit() and 0 < int(port) < 65536):
            raise ValueError(f"port {port!r} is not a number 1..65535")
    except ImportError:  # pragma: no cover - pyvisa is a hard dependency
        return
    except Exception as exc:  # pyvisa raises InvalidResourceName (a ValueError) for malformed names
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise BadInput("argument", "RESOURCE", f"{resource!r} is not a VISA resource string ({first})",
                       "a form such as TCPIP0::192.168.1.10::5025::SOCKET") from None
