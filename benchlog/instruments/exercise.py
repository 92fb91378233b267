"""Bringing up an instrument: every operation of its profile sent once with the outputs off, each judged by the instrument.

A profile written for an instrument nobody on the project has seen can hold a
command form the instrument does not accept. A sweep would find it late — one
of them only after the output is on. Here each operation is sent on its own with
the output (supply) or input (load) switched off first, and the error queue
(`SYSTem:ERRor?`, SCPI-99 vol. 2 21.8) is drained after each, so the verdict on
every command is the instrument's own: accepted, or its error code and text.

What is never sent: `output_on`, `input_on` (power) and `polarity_reversed`
(a reversed board). Setpoints are sent as 0 V and 0 A; protection levels at the
profile's own maxima (nothing flows, and nothing is left to trip early). An operation this module
does not know is sent only when it is a fixed query (a query changes no
setting); otherwise it is listed as not sent. The output is switched off again
at the end.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Iterator

from benchlog.scpi.errors import ScpiReplyError
from benchlog.scpi.numbers import fill_template
from benchlog.scpi.replies import ErrorEntry, parse_bool, parse_error_entry, parse_numbers

from .errors import InstrumentTimeout, NonsenseReply, TransportError, WrongInstrument
from .profile import Profile
from .transport import Transport

#: Never sent while exercising: each would switch power into the board or reverse it.
NEVER_SENT = {"output_on": "switches the output on", "input_on": "switches the input on",
              "polarity_reversed": "reverses the polarity"}
#: The off command of each role, sent first and last.
OFF_OPERATION = {"supply": "output_off", "load": "input_off"}
#: The state query of each power role, asked before the first off command: an output found on is reported.
STATE_OPERATION = {"supply": ("output_state", "output"), "load": ("input_state", "input")}
#: Setpoints for the setting operations: nothing flows with the output off, and 0 is the safest value.
ZERO_SETPOINTS = {"voltage_v": 0.0, "current_a": 0.0}
# How many error-queue entries are read at most after one command (a queue that never empties is a fault).
_MAX_ERROR_READS = 32


@dataclass(frozen=True)
class Trial:
    """One operation sent once, and what the instrument made of it."""

    operation: str
    command: str
    outcome: str  # "accepted", "refused", "no reply", "wrong reply", "not sent"
    reply: str = ""
    errors: tuple[ErrorEntry, ...] = ()
    note: str = ""

    @property
    def refused(self) -> bool:
        return self.outcome in ("refused", "no reply", "wrong reply")

    def describe(self) -> str:
        if self.errors:
            first = self.errors[0]
            more = f" (+{len(self.errors) - 1} more)" if len(self.errors) > 1 else ""
            return f"{first.code},\"{first.text}\"{more}"
        return self.note or (f"reply {self.reply}" if self.reply else "")


@dataclass(frozen=True)
class ExerciseResult:
    resource: str
    profile: Profile
    idn_text: str
    earlier_errors: tuple[ErrorEntry, ...]
    trials: tuple[Trial, ...]
    #: what the state query said at connect, before anything was switched: True (on), False, None (not asked)
    found_on: bool | None = None
    #: the state read back right after the first off command, when it was found on
    on_after_off: bool | None = None

    @property
    def refused(self) -> tuple[Trial, ...]:
        return tuple(t for t in self.trials if t.refused)


class _Session:
    """Sends one command or query, then drains the error queue; every outcome becomes a Trial."""

    def __init__(self, transport: Transport, profile: Profile) -> None:
        self.transport = transport
        self.profile = profile

    def drain(self) -> tuple[ErrorEntry, ...]:
        command = self.profile.error_query
        entries: list[ErrorEntry] = []
        for _ in range(_MAX_ERROR_READS):
            reply = self.transport.query(command)
            try:
                entry = parse_error_entry(reply)
            except ScpiReplyError:
                raise NonsenseReply(command, reply, 'an error entry such as +0,"No error"',
                                    resource=self.transport.resource) from None
            if not entry.is_error:
                break
            entries.append(entry)
        return tuple(entries)

    def send(self, operation: str, command: str, *, expect: int | None = None) -> Trial:
        """Send `command`; a query's reply is read (`expect`: that many numbers must come back)."""
        reply = ""
        note = ""
        is_query = "?" in command
        try:
            if is_query:
                reply = self.transport.query(command).strip()
            else:
                self.transport.write(command)
        except InstrumentTimeout as exc:
            note = f"no reply ({exc})"
        errors = self.drain()
        if errors:
            return Trial(operation, command, "refused", reply, errors)
        if note:
            return Trial(operation, command, "no reply", note=note)
        if expect is not None:
            try:
                values = parse_numbers(reply)
            except ScpiReplyError:
                return Trial(operation, command, "wrong reply", reply, note=f"reply {_short(reply)}, expected numbers")
            if len(values) != expect:
                return Trial(operation, command, "wrong reply", reply,
                             note=f"{len(values)} readings, expected {expect}")
        return Trial(operation, command, "accepted", _short(reply))


def _short(text: str, limit: int = 60) -> str:
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _nplc_values(profile: Profile) -> tuple[float | None, ...]:
    if not profile.sets_nplc:
        return (None,)
    limits = profile.limits
    if limits.nplc_choices:
        return tuple(limits.nplc_choices)
    values = [limits.nplc_min, limits.nplc_max]
    if limits.nplc_min is not None and limits.nplc_max is not None and limits.nplc_min < 1.0 < limits.nplc_max:
        values.insert(1, 1.0)
    return tuple(v for v in values if v is not None)


def _protection_tops(profile: Profile) -> Iterator[tuple[str, str, float]]:
    """(operation, placeholder, level) for each protection level the profile has, at the profile's own maximum.

    The top of the range is the harmless value: with the output off nothing flows, and a level
    left there cannot trip a later session early (the sweep programs its own levels anyway).
    A level whose maximum the profile does not state is not sent.
    """
    most_v, most_a = profile.limits.max_voltage_v, profile.limits.max_current_a
    tops = {"over_voltage_protection": ("voltage_v", most_v), "over_current_protection": ("current_a", most_a),
            "over_power_protection": ("power_w", most_v * most_a if most_v and most_a else None)}
    for operation, (key, value) in tops.items():
        if operation in profile.commands and value:
            yield operation, key, value


def _label(operation: str, **values: float | None) -> str:
    shown = " ".join(f"{k} {v:g}" for k, v in values.items() if v is not None)
    return f"{operation} {shown}".strip()


def _plan(profile: Profile) -> Iterator[tuple[str, str, int | None] | Trial]:
    """(label, command, expected reading count) for each operation to send, or a Trial for one not sent."""
    commands = profile.commands
    role = profile.role
    for i, command in enumerate(profile.connect_commands):
        yield f"connect_commands[{i}]", command, None
    if role == "meter":
        for function, operation, key, ranges in (
            ("dc_voltage", "configure_voltage", "range_v", profile.limits.voltage_ranges_v),
            ("dc_current", "configure_current", "range_a", profile.limits.current_ranges_a),
        ):
            if operation not in commands:
                continue
            for r in ranges:
                for nplc in _nplc_values(profile):
                    values = {key: r, "nplc": nplc}
                    yield _label(operation, **values), fill_template(
                        commands[operation], **{k: v for k, v in values.items() if v is not None}), None
        if "configure_voltage" in commands:  # leave the meter on its top voltage range before reading
            top = profile.limits.voltage_ranges_v[-1]
            nplc = _nplc_values(profile)[0]
            values = {"range_v": top, "nplc": nplc}
            yield _label("configure_voltage", **values), fill_template(
                commands["configure_voltage"], **{k: v for k, v in values.items() if v is not None}), None
        count = min(2, profile.limits.max_samples)
        if "set_samples" in commands:
            yield f"set_samples count {count}", fill_template(commands["set_samples"], count=count), None
        else:
            count = 1
        if "trigger" in commands:
            yield "trigger", commands["trigger"], None
        yield "read", commands["read"], count
        if "set_samples" in commands and count != 1:
            yield "set_samples count 1", fill_template(commands["set_samples"], count=1), None
        for operation, key, ranges in (("measure_voltage", "range_v", profile.limits.voltage_ranges_v),
                                       ("measure_current", "range_a", profile.limits.current_ranges_a)):
            if operation in commands:
                top = ranges[-1] if ranges else None
                if "{" + key + "}" in commands[operation] and top is not None:
                    yield _label(operation, **{key: top}), fill_template(commands[operation], **{key: top}), 1
                else:
                    yield operation, fill_template(commands[operation]), 1
        handled = {"configure_voltage", "configure_current", "set_samples", "trigger", "read",
                   "measure_voltage", "measure_current"}
    else:
        handled = {OFF_OPERATION[role]}
        for operation in ("set_mode_cc", "set_voltage", "set_current_limit", "set_current", "polarity_normal",
                          "protection_clear"):
            if operation in commands:
                handled.add(operation)
                yield _label(operation, **{k: v for k, v in ZERO_SETPOINTS.items()
                                           if "{" + k + "}" in commands[operation]}), \
                    fill_template(commands[operation], **ZERO_SETPOINTS), None
        for operation, key, value in _protection_tops(profile):
            handled.add(operation)
            yield _label(operation, **{key: value}), fill_template(commands[operation], **{key: value}), None
        for operation in ("measure_voltage", "measure_current"):
            if operation in commands:
                handled.add(operation)
                yield operation, fill_template(commands[operation]), 1
        if profile.mode is not None:
            yield "mode query", profile.mode.query, None
    handled |= {"error_query"}  # asked after every operation anyway
    for operation, template in commands.items():
        if operation in handled:
            continue
        if operation in NEVER_SENT:
            yield Trial(operation, template, "not sent", note=f"never sent here: it {NEVER_SENT[operation]}")
        elif "?" in template and "{" not in template:
            yield operation, template, None  # a fixed query: state, trip, sync and the like
        else:
            yield Trial(operation, template, "not sent", note="not sent: no harmless value is known for it")


def _state(session: _Session, profile: Profile) -> bool | None:
    """The output/input state by the profile's own query (None: no query, or no usable reply)."""
    operation, _ = STATE_OPERATION.get(profile.role, ("", ""))
    if not profile.has(operation):
        return None
    try:
        reply = session.transport.query(fill_template(profile.commands[operation]))
        session.drain()
        return parse_bool(reply)
    except (InstrumentTimeout, ScpiReplyError):
        return None  # the exercise itself then reports the state query's trouble


def exercise(transport: Transport, profile: Profile, *, check_idn: bool = True,
             on_notice: Callable[[str], None] | None = None) -> ExerciseResult:
    """Send every operation of `profile` over `transport` with the output off; the link stays open.

    An output (input) found ON when the link opens is told to `on_notice` at once, in one
    line naming role and resource, before the off command goes out; then read back.
    """
    session = _Session(transport, profile)
    idn_text = transport.query("*IDN?").strip()
    if check_idn and not profile.matches_idn(idn_text):
        raise WrongInstrument(idn_text, profile.name, profile.idn_pattern, resource=transport.resource)
    earlier = session.drain()  # queued before we came: not blamed on any command of ours
    trials: list[Trial] = []
    off = OFF_OPERATION.get(profile.role)
    found_on = _state(session, profile) if off is not None else None
    on_after_off: bool | None = None
    if found_on and on_notice is not None:
        what = STATE_OPERATION[profile.role][1]
        on_notice(f"{profile.role} {transport.resource}: {what} found ON at connect; "
                  "switching it off and reading it back")
    if off is not None:
        first = session.send(off, fill_template(profile.commands[off]))
        trials.append(first)
        if found_on:
            on_after_off = _state(session, profile)
        if first.outcome != "accepted":
            # Without a working off command nothing else is sent: the output could be on.
            trials.append(Trial("(the rest)", "", "not sent", note=f"not sent: {off} was not accepted"))
            return ExerciseResult(transport.resource, profile, idn_text, earlier, tuple(trials), found_on,
                                  on_after_off)
    try:
        for step in _plan(profile):
            if isinstance(step, Trial):
                trials.append(step)
                continue
            label, command, expect = step
            trials.append(session.send(label, command, expect=expect))
    finally:
        if off is not None:
            try:
                trials.append(session.send(f"{off} (again, at the end)", fill_template(profile.commands[off])))
            except TransportError:
                pass  # the link is gone; the caller reports the transport error
    return ExerciseResult(transport.resource, profile, idn_text, earlier, tuple(trials), found_on, on_after_off)
