"""The inventory: the sites, devices and ports linktriage may read, and how to read them.

One TOML file::

    [defaults]
    timeout_s = 2        # per request
    retries = 2          # timeouts retried, with backoff
    concurrency = 32     # devices read at once in a sweep

    [[devices]]
    name = "lark-core1"
    site = "central"
    collector = "snmp"
    address = "10.20.0.1"
    ports = ["up1", "up2"]          # optional: default, every port the device lists
    serves = { up1 = "uplink to the east wing" }
    [devices.options]
    version = "2c"
    community = { env = "LARK_SNMP_COMMUNITY" }

Credentials are references (``{ env = "NAME" }`` or ``{ file = "/path" }``), never inline.
Chat commands and jobs reach devices only through these entries: a name that is not here
is refused before anything is sent, so no chat text can make the bot contact an address.
"""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

from linktriage import invalid
from linktriage.errors import DeviceSetupError, InventoryError, LinktriageError
from linktriage.network.collectors.base import Collector, Target, collector_class


class Defaults(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    timeout_s: float = Field(default=2.0, gt=0, le=120)
    retries: int = Field(default=2, ge=0, le=10)
    concurrency: int = Field(default=32, ge=1, le=1024)


class DeviceEntry(BaseModel):
    """One device: where it is, how to read it, which ports to watch."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    name: str = Field(pattern=r"^[A-Za-z0-9][A-Za-z0-9._\-]{0,63}$")
    site: str = Field(min_length=1)
    collector: str
    address: str | None = None
    ports: list[str] | None = None
    serves: dict[str, str] = Field(default_factory=dict)
    timeout_s: float | None = Field(default=None, gt=0, le=120)
    retries: int | None = Field(default=None, ge=0, le=10)
    options: dict[str, Any] = Field(default_factory=dict)


class Inventory(BaseModel):
    """Every device linktriage may read."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    defaults: Defaults = Defaults()
    devices: list[DeviceEntry] = Field(default_factory=list)

    @model_validator(mode="after")
    def _unique_names(self) -> Inventory:
        seen: set[str] = set()
        for device in self.devices:
            if device.name.lower() in seen:
                raise ValueError(f"device {device.name!r} is listed twice")
            seen.add(device.name.lower())
        return self

    def addresses(self) -> dict[str, str]:
        """Each device's address by its name, where it has one."""
        return {d.name: d.address for d in self.devices if d.address}

    def entry(self, name: str) -> DeviceEntry | None:
        return next((d for d in self.devices if d.name == name), None)

    def target(self, device: DeviceEntry) -> Target:
        return Target(
            name=device.name,
            address=device.address,
            options=device.options,
            timeout_s=device.timeout_s or self.defaults.timeout_s,
            retries=self.defaults.retries if device.retries is None else device.retries,
        )

    def collector(self, device: DeviceEntry) -> Collector[Any]:
        """The collector for a device, options validated (nothing is sent yet)."""
        return collector_class(device.collector)(self.target(device))


def load_inventory(path: str | Path) -> Inventory:
    """Read and validate an inventory file."""
    source = Path(path)
    try:
        data = tomllib.loads(source.read_text(encoding="utf-8"))
    except OSError as exc:
        raise InventoryError(f"Cannot read the inventory {source}: {exc.strerror}") from exc
    except tomllib.TOMLDecodeError as exc:
        raise InventoryError(f"{source} is {invalid.not_toml(exc)}") from exc
    try:
        return Inventory.model_validate(data)
    except ValidationError as exc:
        said = "; ".join(invalid.problems(exc))
        raise InventoryError(f"Bad inventory {source}: {said}") from exc


def problems(inventory: Inventory) -> dict[str, str]:
    """What keeps each device from being read, checked without contacting anything:
    an unknown collector, bad options, a credential reference that does not resolve."""
    found: dict[str, str] = {}
    for device in inventory.devices:
        try:
            collector = inventory.collector(device)
            for secret in _secrets(collector.options):
                secret.reveal()
        except DeviceSetupError as exc:
            found[device.name] = exc.problem  # the device's line names it already
        except LinktriageError as exc:
            found[device.name] = exc.render()
    return found


def _secrets(options: BaseModel) -> list[Any]:
    from linktriage.network.collectors.base import SecretRef

    return [v for v in vars(options).values() if isinstance(v, SecretRef)]


def demo_inventory() -> Inventory:
    """The demo network as an inventory: each switch read by the ``demo`` collector."""
    from linktriage.network.demo import DemoNetwork  # the simulator, only when asked for

    devices = []
    for device, refs in DemoNetwork().devices().items():
        devices.append(
            DeviceEntry(
                name=device,
                site=refs[0].site,
                collector="demo",
                serves={r.port: r.serves for r in refs if r.serves},
            )
        )
    return Inventory(devices=devices)
