"""Finding instruments: the VISA resources the installed backends can see, and which optional packages are missing.

pyvisa-py speaks USB-TMC only with pyusb and serial (ASRL) only with pyserial;
without them it cannot even list such instruments. `missing_extras` names the
benchlog extra that brings each in (`pip install 'benchlog[usb]'`), the way
pyvisa-py names the package a resource type needs.

By default only local buses are listed (USB, serial, GPIB): listing LAN
instruments sends a VXI-11 broadcast on the local network, so it is done only
when asked (`lan=True`). A raw-socket instrument (`TCPIP0::host::port::SOCKET`)
can never be discovered: give its resource string.
"""

from __future__ import annotations

import importlib.util
from dataclasses import dataclass

from .errors import TransportError


@dataclass(frozen=True)
class MissingExtra:
    extra: str  # the benchlog extra: pip install 'benchlog[<extra>]'
    package: str  # the package it installs
    buses: str  # what cannot be listed or opened without it

    def line(self) -> str:
        return (f"{self.buses} instruments cannot be listed or opened: {self.package} is not installed "
                f"(pip install 'benchlog[{self.extra}]')")


#: (import name, extra, package, buses) of each optional backend package.
_EXTRAS = (("usb", "usb", "pyusb", "USB-TMC"), ("serial", "serial", "pyserial", "serial (ASRL)"))


def missing_extras() -> tuple[MissingExtra, ...]:
    """The optional packages pyvisa-py would need for USB and serial that are not installed here."""
    return tuple(MissingExtra(extra, package, buses) for module, extra, package, buses in _EXTRAS
                 if importlib.util.find_spec(module) is None)


def list_resources(backend: str = "@py", *, lan: bool = False) -> tuple[str, ...]:
    """VISA resource strings the backend sees: local buses, and LAN instruments only when `lan` is true."""
    import pyvisa

    try:
        manager = pyvisa.ResourceManager(backend)
    except (OSError, ValueError, pyvisa.errors.Error) as exc:
        raise TransportError(f"the VISA backend {backend!r} cannot be loaded ({exc})") from None
    try:
        if lan or backend != "@py":
            return tuple(manager.list_resources())
        return _local_resources()
    finally:
        manager.close()


def _local_resources() -> tuple[str, ...]:
    """pyvisa-py's USB, serial and GPIB listings, without the LAN broadcast its full listing sends."""
    from pyvisa import constants, rname

    try:
        from pyvisa_py.sessions import Session
    except ImportError:  # pragma: no cover - pyvisa-py is a hard dependency
        return ()
    local = {constants.InterfaceType.usb, constants.InterfaceType.asrl, constants.InterfaceType.gpib}
    found: list[str] = []
    for (interface, resource_class), session in Session.iter_valid_session_classes():
        if interface in local and resource_class == "INSTR":
            try:
                found += list(session.list_resources())
            except Exception:  # noqa: BLE001 - one bus failing to list must not hide the others
                continue
    return tuple(rname.filter(found, "?*::INSTR"))
