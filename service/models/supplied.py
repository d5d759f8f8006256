"""Request part shared by the operations that may judge a generator's dip and the devices."""

from __future__ import annotations

from typing import ClassVar, Literal

from pydantic import Field, model_validator

from service.models.clearance import CurvedDevice
from service.models.common import Rules, Study, both, given, implies, is_not
from service.models.dip import BusLoadIn, CustomLimit, ExcitationIn, GeneratorIn, PresetExcitation


class SuppliedStudy(Study):
    """A study whose unit may be energised from a generator, with devices to judge."""

    supply: GeneratorIn | None = Field(
        None,
        description="A generator energising the unit (three phase): its X''d is the source of "
        "the peaks and its dip is judged against dip_limit; give this or source",
    )
    excitation: ExcitationIn = Field(
        default_factory=lambda: PresetExcitation(kind="unknown"),
        description="The generator's regulator",
    )
    bus_load: BusLoadIn | None = None
    dip_limit: Literal["G1", "G2", "G3"] | CustomLimit = Field(
        "G2", description="Dip limit: an ISO 8528-5 class (values from memory) or a limit"
    )
    devices: list[CurvedDevice] | None = Field(
        None,
        min_length=1,
        max_length=20,
        description="Protective devices on the energised side, judged against the inrush",
    )

    SCHEMA_RULES: ClassVar[Rules] = (
        is_not(both(given("supply"), given("source"))),
        implies(
            given("supply"),
            {
                "required": ["transformer"],
                "properties": {
                    "transformer": {"type": "object", "properties": {"phases": {"const": 3}}}
                },
            },
        ),
    )

    @model_validator(mode="after")
    def _supply_and_devices(self) -> SuppliedStudy:
        if self.supply is not None:
            if self.transformer is None:
                raise ValueError("a generator supply needs transformer (nameplate mode)")
            if self.source is not None:
                raise ValueError("give the generator in 'supply' or a source in 'source', not both")
            if self.transformer.phases != 3:
                raise ValueError("a generator supply needs a three-phase unit")
        if self.devices is not None:
            names = [d.name for d in self.devices]
            if len(set(names)) != len(names):
                raise ValueError("device names must be distinct")
        return self
