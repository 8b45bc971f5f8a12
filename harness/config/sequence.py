"""The sequence file: the unit under test, its guarantees, test limits and the steps."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from harness.calc.nameplate import edition_problems
from harness.calc.record import ComplianceRule, raise_problems, Guarantees, Tolerances, Transformer, Waveform
from harness.config.station import FormatVersion, Limits
from harness.config.steps import AnyStep

SEQUENCE_SPEC = 1


class Unit(BaseModel):
    """What identifies the unit under test on the report (the nameplate is ``transformer``)."""
    model_config = ConfigDict(frozen=True, extra="forbid")
    serial: str = Field(min_length=1)
    maker: str | None = None
    description: str | None = None
    customer_order: str | None = None


class Rehearsal(BaseModel):
    """Where the sequence is rehearsed when no station is given (``harness run``, ``pytest --rehearse``)."""
    model_config = ConfigDict(frozen=True, extra="forbid")
    scenario: str = Field(min_length=1, description=(
        "'nameplate' (a unit and bay built from this sequence's nameplate and guarantees), a built-in "
        "scenario's name (e.g. three-phase), or a scenario file, relative to this sequence's folder"))


class Sequence(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid", populate_by_name=True)
    schema_: str | None = Field(None, alias="$schema", description="JSON Schema for editors")
    spec: FormatVersion = Field(description="format version of the sequence file")
    name: str = Field(min_length=1)
    operator: str | None = None
    unit: Unit
    standard: Literal["iec", "ieee"] = "iec"
    transformer: Transformer
    guarantees: Guarantees | None = None
    tolerances: Tolerances | None = None
    waveform: Waveform | None = Field(None, description="waveform correction of the no-load loss: form, P1/P2")
    compliance: list[ComplianceRule] | None = Field(
        None, min_length=1, description="efficiency regulations to check the unit against")
    limits: Limits = Field(description="test limits: each must sit inside the station's")
    steps: list[AnyStep] = Field(min_length=1)
    rehearse: Rehearsal | None = Field(None, description="the simulated unit to rehearse on without a station")

    @model_validator(mode="after")
    def _edition_of_standard(self) -> "Sequence":
        raise_problems(edition_problems(self.transformer.standard_edition, self.standard))
        return self
