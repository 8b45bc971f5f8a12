"""Command profiles: what each abstract operation of an instrument class sends, and how it answers.

A profile is a YAML file per instrument model (``drivers/profiles/*.yaml``). A lab supports a
new instrument by writing one; no code. Templates are written in SCPI notation, long form with
the short form in capitals (``SOURce:VOLTage {value}``); with ``mnemonics: short`` the short
forms are sent (``SOUR:VOLT 230.0``). Placeholders are fixed per operation: ``{value}`` a number
(an optional format spec is allowed: ``{value:.4f}``), ``{state}`` the on/off word, ``{channels}``
a SCPI channel list such as ``(@1,2,3)``, ``{fed}`` and ``{other}`` the wiring words.

Loading validates everything once, with ``FILE:LINE:COLUMN`` errors, and sends nothing.
"""

from __future__ import annotations

import re
import string
from pathlib import Path
from typing import Any, ClassVar, Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationInfo, field_validator, model_validator

from harness.common.errors import InputError
from harness.common.yamlio import LoadedYaml, load_file, validate

FORMAT_VERSION = 1
PROFILE_DIR = Path(__file__).parent / "profiles"
QUANTITIES = ("u_rms", "u_mean", "i_rms", "p", "freq")

_SAMPLES = {"value": 1.5, "state": "ON", "channels": "(@1)", "fed": "HV", "other": "OPEN"}
_MNEMONIC = re.compile(r"(:?)([A-Za-z]+)(\d*)(\??)")


def _short_token(token: str) -> str:
    if not token or token.startswith("*"):
        return token
    match = _MNEMONIC.fullmatch(token)
    if match is None:
        return token
    colon, letters, suffix, mark = match.groups()
    short = "".join(c for c in letters if c.isupper())
    if not short:
        raise ValueError(f"mnemonic '{letters}' has no short form in capitals (write e.g. 'SOURce')")
    return colon + short + suffix + mark


def _short_segment(segment: str) -> str:
    body = segment.lstrip()
    lead = segment[: len(segment) - len(body)]
    header, space, rest = body.partition(" ")
    parts = header.split(":")
    return lead + ":".join(_short_token(p) for p in parts) + space + rest


def short_form(template: str) -> str:
    """The template with every mnemonic in its short form (``SOURce:VOLTage`` -> ``SOUR:VOLT``)."""
    return ";".join(_short_segment(s) for s in template.split(";"))


def _check_placeholders(template: str, allowed: frozenset[str]) -> None:
    try:
        found = {name for _, name, _, _ in string.Formatter().parse(template) if name is not None}
    except ValueError as exc:
        raise ValueError(f"bad placeholder in '{template}': {exc}") from None
    unknown = found - allowed
    if unknown:
        takes = ", ".join(f"{{{n}}}" for n in sorted(allowed)) or "no placeholder"
        raise ValueError(f"unknown placeholder {{{sorted(unknown)[0]}}} (this command takes {takes})")
    missing = allowed - found
    if missing:
        raise ValueError(f"the command must contain {{{sorted(missing)[0]}}}")


def check_template(template: str, allowed: frozenset[str], is_query: bool) -> str:
    """Raise ``ValueError`` with a sentence when ``template`` cannot serve its operation."""
    if not template.strip() or "\n" in template:
        raise ValueError("a command must be one non-empty line")
    _check_placeholders(template, allowed)
    try:
        template.format(**_SAMPLES)
    except (ValueError, KeyError, IndexError) as exc:
        raise ValueError(f"cannot fill '{template}': {exc}") from None
    if is_query and "?" not in template:
        raise ValueError("a query must contain '?'")
    if not is_query and "?" in template:
        raise ValueError("a setting command must not contain '?' (it would leave a reply unread)")
    return template


def _word(value: Any) -> Any:
    if isinstance(value, bool):
        raise ValueError("YAML reads unquoted ON/OFF/yes/no as true/false: put the word in quotes")
    return value


class _Strict(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class _Commands(_Strict):
    """Templates of one instrument class; SPECS gives each its placeholders and query-ness."""

    SPECS: ClassVar[dict[str, tuple[frozenset[str], bool]]] = {}

    @field_validator("*", mode="before")
    @classmethod
    def _not_bool(cls, value: Any) -> Any:
        return _word(value)

    @field_validator("*")
    @classmethod
    def _template(cls, value: str | None, info: ValidationInfo) -> str | None:
        if value is None:
            return None
        allowed, is_query = cls.SPECS[info.field_name or ""]
        return check_template(value, allowed, is_query)


_N, _S, _C, _Q = frozenset({"value"}), frozenset({"state"}), frozenset({"channels"}), frozenset()


class AcSourceCommands(_Commands):
    SPECS = {
        "set_voltage": (_N, False), "voltage_setpoint": (_Q, True),
        "set_frequency": (_N, False), "frequency_setpoint": (_Q, True),
        "set_output": (_S, False), "output_state": (_Q, True),
        "set_current_protection": (_N, False), "current_protection": (_Q, True),
        "set_current_protection_state": (_S, False), "protection_tripped": (_Q, True),
        "set_slew": (_N, False), "slew": (_Q, True),
        "measured_voltage": (_Q, True), "measured_current": (_Q, True),
        "measured_voltages": (_Q, True), "measured_currents": (_Q, True),
        "set_watchdog_timeout": (_N, False), "set_watchdog_state": (_S, False),
    }
    set_voltage: str
    voltage_setpoint: str
    set_frequency: str
    frequency_setpoint: str
    set_output: str
    output_state: str
    set_current_protection: str
    current_protection: str | None = None
    set_current_protection_state: str | None = None
    protection_tripped: str | None = None
    set_slew: str | None = None
    slew: str | None = None
    measured_voltage: str | None = None
    measured_current: str | None = None
    measured_voltages: str | None = None   # per phase of a three-phase source, comma-separated
    measured_currents: str | None = None
    set_watchdog_timeout: str | None = None
    set_watchdog_state: str | None = None

    @model_validator(mode="after")
    def _watchdog_pair(self) -> AcSourceCommands:
        if (self.set_watchdog_timeout is None) != (self.set_watchdog_state is None):
            raise ValueError("give both set_watchdog_timeout and set_watchdog_state, or neither")
        return self


class PowerAnalyserCommands(_Commands):
    SPECS = {
        "set_voltage_range": (_N, False), "voltage_range": (_Q, True),
        "set_current_range": (_N, False), "current_range": (_Q, True),
        "set_averaging": (_N, False), "averaging": (_Q, True),
        "set_channel_voltage_range": (frozenset({"value", "channels"}), False),
        "voltages": (_C, True), "phase_angle": (_C, True),
    }
    set_voltage_range: str
    voltage_range: str | None = None
    set_current_range: str
    current_range: str | None = None
    set_averaging: str | None = None
    averaging: str | None = None
    # The ratio test: the voltage range of some channels only, the rms voltages of a channel list
    # (comma-separated), and the phase angle of the second channel of {channels} against the first.
    set_channel_voltage_range: str | None = None
    voltages: str | None = None
    phase_angle: str | None = None


class ResistanceMeterCommands(_Commands):
    SPECS = {"measure": (_C, True), "test_current": (_Q, True)}
    measure: str
    test_current: str | None = None


class ThermometerCommands(_Commands):
    SPECS = {"measure": (_C, True)}
    measure: str


class BayControlCommands(_Commands):
    SPECS = {"set_fed": (frozenset({"fed"}), False), "fed": (_Q, True),
             "set_other": (frozenset({"other"}), False), "other": (_Q, True),
             "set_tap": (_N, False), "tap": (_Q, True)}
    set_fed: str
    fed: str
    set_other: str
    other: str
    set_tap: str | None = None
    tap: str | None = None


class TapChangerCommands(_Commands):
    """An on-load tap changer's drive: move to a tap, the tap it is on, whether it is still
    moving, and the lowest and highest tap it can reach."""
    SPECS = {"set_position": (_N, False), "position": (_Q, True), "moving": (_Q, True),
             "lowest": (_Q, True), "highest": (_Q, True)}
    set_position: str
    position: str
    moving: str
    lowest: str
    highest: str


class _Words(_Strict):
    @field_validator("*", mode="before")
    @classmethod
    def _not_bool(cls, value: Any) -> Any:
        return _word(value)

    @field_validator("*")
    @classmethod
    def _one_word(cls, value: str) -> str:
        if not re.fullmatch(r"[A-Za-z0-9]+", value):
            raise ValueError(f"'{value}' is not one SCPI word (letters and digits)")
        return value


class SourceWords(_Words):
    enabled: str = "ON"
    disabled: str = "OFF"


class WiringWords(_Words):
    hv: str = "HV"
    lv: str = "LV"
    open: str = "OPEN"
    short: str = "SHORt"


class SnapshotFormat(_Strict):
    """One query per reading and the layout of its reply.

    ``by_quantity``: one group per field, split by ``field_separator``; inside a group, one value
    per channel split by ``channel_separator`` (the reply of ``;``-joined MEASure queries).
    ``by_channel``: one group per channel split by ``channel_separator``; inside, the fields.
    ``skip`` marks a field of the reply that is not used.
    """

    query: str
    fields: tuple[str, ...]
    layout: Literal["by_quantity", "by_channel"] = "by_quantity"
    field_separator: str = ";"
    channel_separator: str = ","

    @field_validator("query")
    @classmethod
    def _query(cls, value: str) -> str:
        return check_template(value, _C, True)

    @field_validator("fields")
    @classmethod
    def _fields(cls, value: tuple[str, ...]) -> tuple[str, ...]:
        unknown = [f for f in value if f not in QUANTITIES and f != "skip"]
        if unknown:
            raise ValueError(f"unknown field '{unknown[0]}' (fields: {', '.join(QUANTITIES)}, skip)")
        for quantity in QUANTITIES:
            if value.count(quantity) != 1:
                raise ValueError(f"'{quantity}' must appear exactly once")
        return value

    @field_validator("field_separator", "channel_separator")
    @classmethod
    def _separator(cls, value: str) -> str:
        if len(value) != 1 or value in "0123456789.+-eE#_ \t":
            raise ValueError(f"'{value}' cannot separate numbers (one character, not part of a number)")
        return value

    @model_validator(mode="after")
    def _distinct(self) -> SnapshotFormat:
        if self.field_separator == self.channel_separator:
            raise ValueError("field_separator and channel_separator must differ")
        return self


class CommonCommands(_Strict):
    """IEEE 488.2 common commands; override only for an instrument that lacks one."""

    identify: str = "*IDN?"
    reset: str = "*RST"
    clear: str = "*CLS"
    operation_complete: str = "*OPC?"


class Expect(_Strict):
    """What ``*IDN?`` must answer for this profile to fit (checked by ``identify``)."""

    maker: str | None = None
    model: str | None = None  # a regular expression matched against the whole model field

    @field_validator("model")
    @classmethod
    def _pattern(cls, value: str | None) -> str | None:
        if value is not None:
            try:
                re.compile(value)
            except re.error as exc:
                raise ValueError(f"not a regular expression: {exc}") from None
        return value


class Profile(_Strict):
    format: int = Field(strict=True)
    name: str
    kind: str
    description: str = ""
    mnemonics: Literal["long", "short"] = "long"
    error_query: str | None = "SYSTem:ERRor?"
    common: CommonCommands = CommonCommands()
    expect: Expect | None = None

    @field_validator("format")
    @classmethod
    def _format(cls, value: int) -> int:
        if value != FORMAT_VERSION:
            raise ValueError(f"profile format {value} is not supported (this version reads {FORMAT_VERSION})")
        return value

    @field_validator("error_query")
    @classmethod
    def _error_query(cls, value: str | None) -> str | None:
        return None if value is None else check_template(value, _Q, True)

    def send_form(self, template: str) -> str:
        """The template as it goes on the wire (short mnemonics when the profile asks)."""
        return short_form(template) if self.mnemonics == "short" else template

    def command(self, operation: str) -> str | None:
        """The wire form of an operation's template, None when the instrument lacks it."""
        template = getattr(self.commands, operation)  # type: ignore[attr-defined]
        return None if template is None else self.send_form(template)


class AcSourceProfile(Profile):
    kind: Literal["ac_source"]
    phases: Literal[1, 3] = 1
    commands: AcSourceCommands
    words: SourceWords = SourceWords()

    @model_validator(mode="after")
    def _per_phase_readback(self) -> AcSourceProfile:
        per_phase = (self.commands.measured_voltages, self.commands.measured_currents)
        if self.phases == 1 and any(per_phase):
            raise ValueError("measured_voltages/measured_currents are for a three-phase source (phases: 3)")
        return self


class PowerAnalyserProfile(Profile):
    kind: Literal["power_analyser"]
    commands: PowerAnalyserCommands
    snapshot: SnapshotFormat


class ResistanceMeterProfile(Profile):
    kind: Literal["resistance_meter"]
    commands: ResistanceMeterCommands


class ThermometerProfile(Profile):
    kind: Literal["thermometer"]
    commands: ThermometerCommands


class BayControlProfile(Profile):
    kind: Literal["bay_control"]
    commands: BayControlCommands
    words: WiringWords = WiringWords()


class TapChangerProfile(Profile):
    kind: Literal["tap_changer"]
    commands: TapChangerCommands


PROFILE_MODELS: dict[str, type[Profile]] = {
    "ac_source": AcSourceProfile,
    "power_analyser": PowerAnalyserProfile,
    "resistance_meter": ResistanceMeterProfile,
    "thermometer": ThermometerProfile,
    "bay_control": BayControlProfile,
    "tap_changer": TapChangerProfile,
}
KINDS = tuple(PROFILE_MODELS)


def kind_of(instrument_class: str | type) -> str:
    """The profile kind for a kind name or an instrument class (its ``KIND``)."""
    kind = instrument_class if isinstance(instrument_class, str) else getattr(instrument_class, "KIND", "")
    if kind not in PROFILE_MODELS:
        raise ValueError(f"unknown instrument kind '{kind}' (kinds: {', '.join(KINDS)})")
    return kind


def profile_path(name_or_path: str | Path, kind: str) -> Path:
    """A file path as given, or a profile name looked up in ``drivers/profiles``."""
    path = Path(name_or_path)
    if path.suffix in (".yaml", ".yml") or len(path.parts) > 1:
        return path
    name = f"generic-{kind.replace('_', '-')}" if str(name_or_path) == "generic" else str(name_or_path)
    return PROFILE_DIR / f"{name}.yaml"


def available_profiles() -> list[str]:
    return sorted(p.stem for p in PROFILE_DIR.glob("*.yaml"))


def _check_kind(loaded: LoadedYaml, kind: str) -> None:
    if not isinstance(loaded.data, dict):
        raise loaded.error((), "a profile is a mapping (format, name, kind, commands, ...)")
    found = loaded.data.get("kind")
    if found is None:
        raise loaded.error((), "'kind' is required")
    if found != kind:
        raise loaded.error(("kind",), f"this profile is for kind '{found}', not '{kind}'")


def _template_paths(profile: Profile) -> list[tuple[tuple[str, ...], str]]:
    paths = [(("commands", k), v) for k, v in profile.commands.model_dump().items() if v]  # type: ignore[attr-defined]
    if profile.error_query:
        paths.append((("error_query",), profile.error_query))
    snapshot = getattr(profile, "snapshot", None)
    if snapshot is not None:
        paths.append((("snapshot", "query"), snapshot.query))
    return paths


def _check_short_forms(profile: Profile, loaded: LoadedYaml) -> None:
    if profile.mnemonics != "short":
        return
    for path, template in _template_paths(profile):
        try:
            short_form(template)
        except ValueError as exc:
            raise loaded.error(path, str(exc)) from None


def load_profile(name_or_path: str | Path, instrument_class: str | type) -> Profile:
    """Load and validate a profile; every error is an :class:`InputError` at its place in the file."""
    kind = kind_of(instrument_class)
    path = profile_path(name_or_path, kind)
    if not path.exists():  # anything else that is there is refused by the loader, in its words
        raise InputError(f"no profile '{name_or_path}' for kind '{kind}' "
                         f"(available: {', '.join(available_profiles())})", str(path), 0, 0)
    loaded = load_file(path)
    _check_kind(loaded, kind)
    profile = validate(PROFILE_MODELS[kind], loaded)
    _check_short_forms(profile, loaded)
    return profile
