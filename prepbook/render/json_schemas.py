"""JSON Schemas (draft 2020-12) of the ``--json`` documents, made from the types they are
written from.

Every ``--json`` document is a service's record (a frozen ``msgspec.Struct``) or a list
of them, written by ``prepbook.cli.output.emit_json``: one key a field, in field order.
``DOCUMENTS`` names, for each command, the type its document is written from, as
``module:name`` so nothing is imported until a schema is asked for. msgspec
(``msgspec.json.schema_components``) turns the types into JSON Schema; this module then
states what the writer adds:

- every field is written, so every property is required;
- a record with a ``to_json()`` writes a different shape: ``RESHAPED`` says how
  (a key renamed, a key left out when empty, a nested document written flat);
- a few documents are written from a mapping, not a record: their shape is a
  ``TypedDict`` here (``BalanceRead``, ``ConfigShown``), or the keys added after a
  record's fields are in ``ADDED`` (`batch show` and its assays);
- a document that is an object begins with ``version``, the version of prepbook that
  wrote it (so no type a document is written from may have a field of that name); a
  document that is a list (``status``) has none.

A document may carry keys a later version adds (new keys are allowed, renames are not:
DESIGN section 4), so objects are left open to more properties. A number that is not
finite is written as null (``emit_json``); the services give finite numbers or None.
"""

from __future__ import annotations

import importlib
import json
import sys
from pathlib import Path
from typing import Any, TypedDict, cast

import msgspec

from prepbook import __version__

DRAFT = "https://json-schema.org/draft/2020-12/schema"
# The version of the schemas: the version of prepbook that writes the documents.
VERSION = __version__
# The key every document that is an object begins with (``emit_json`` writes it).
VERSION_KEY = {"type": "string",
               "description": "The version of prepbook that wrote the document."}


class BalanceRead(TypedDict):
    """`instrument read`: one stable weighing."""

    balance: str
    mass_g: float
    mass_text: str
    unit: str
    raw: str
    read_at: str
    port: str
    profile: str


class ConfigSetting(TypedDict):
    name: str
    value: str | None
    source: str
    origin: str | None


class ConfigShown(TypedDict):
    """`config show`: the configuration file and every setting with where it came from."""

    file: str
    file_exists: bool
    settings: list[ConfigSetting]


# Each command's document, as the type (or types, when the command writes one of
# several) it is written from; a list type for a document that is a list.
L = "prepbook.lab."
DOCUMENTS: dict[str, tuple[str, ...]] = {
    "init": (L + "setup:InitReport",),
    "demo": ("list:" + L + "board:BatchLife",),
    "login": (L + "sessions:SessionInfo",),
    "whoami": ("list:" + L + "sessions:SessionInfo",),
    "standardize": (L + "runs:RunResult",),
    "review": (L + "reviews:QueuedRun",),
    "revoke": (L + "revoking:Revoked",),
    "correct": (L + "runs:RunResult",),
    "exclude": (L + "runs:RunResult",),
    "status": ("list:" + L + "board:BatchLife",),
    "trend": (L + "history:Trend",),
    "trace": (L + "history:Trace",),
    "use": (L + "batches:UseRecorded",),
    "assay": (L + "assays:AssayResult",),
    "impact": ("list:" + L + "assays:ImpactedAssay",),
    "label": (L + "labels:LabelPrinted", "list:" + L + "labels:StaleLabel"),
    "report": ("prepbook.render.report:WrittenReport",),
    "export": (L + "exports:Exported",),
    "backup": (L + "maintenance:BackupReport",),
    "user add": (L + "people:UserInfo",),
    "user list": ("list:" + L + "people:UserInfo",),
    "user disable": (L + "people:UserInfo",),
    "user enable": (L + "people:UserInfo",),
    "user unlock": (L + "people:UserInfo",),
    "user role": (L + "people:UserInfo",),
    "user reset": (L + "people:UserInfo",),
    "user passphrase": (L + "people:UserInfo",),
    "lot add": (L + "lots:LotInfo",),
    "lot list": ("list:" + L + "lots:LotInfo",),
    "instrument add": (L + "instruments:InstrumentInfo",),
    "instrument list": ("list:" + L + "instruments:InstrumentInfo",),
    "instrument calibrate": (L + "instruments:Calibration",),
    "instrument connect": (L + "balances:Connection",),
    "instrument profiles": ("list:" + L + "balances:ProfileInfo",),
    "instrument read": (__name__ + ":BalanceRead",),
    "spec list": ("list:" + L + "specs:SpecInfo",),
    "spec add": (L + "specs:SpecInfo",),
    "spec show": (L + "specs:SpecInfo",),
    "batch make": (L + "batches:MadeBatch",),
    "batch show": (L + "batch_records:BatchRecord",),
    "batch use": (L + "batches:UseRecorded",),
    "batch retire": (L + "history:Retirement",),
    # The audit trail's own types, as the service returns them (render reads no storage).
    "audit log": ("list:" + L + "auditing:AuditEntry",),
    "audit verify": (L + "auditing:audit.VerifyReport",),
    "audit checkpoint": (L + "auditing:CheckpointMade",),
    "audit rotate-key": ("list:" + L + "auditing:KeyChanged",),
    "settings": ("list:" + L + "settings:SettingValue",),
    "settings show": ("list:" + L + "settings:SettingValue",),
    "config show": (__name__ + ":ConfigShown",),
    "calc normality": (L + "calcs:NormalityResult",),
    "calc secondary": (L + "calcs:SecondaryResult",),
    "calc solid": (L + "preparing:SolidResult",),
    "calc liquid": (L + "preparing:LiquidResult",),
    "calc dilute": (L + "preparing:DilutionResult",),
    "calc adjust": (L + "preparing:AdjustResult",),
    "calc buoyancy": (L + "preparing:BuoyancyResult",),
    "calc temperature": (L + "preparing:TemperatureResult",),
    "calc titer": (L + "preparing:TiterResult",),
    "calc endpoint": (L + "curves:EndpointResult",),
    "calc sample": (L + "sample_calcs:SampleCalc",),
    "calc eqpoint": (L + "equilibrium_calcs:AnalyteEqpoint", L + "curves:EqpointResult"),
    "calc salt": (L + "equilibrium_calcs:SaltCalc",),
}


# Keys a command writes after its type's fields: `batch show` adds the batch's assays.
ADDED: dict[str, dict[str, str]] = {
    "batch show": {"assays": "list:" + L + "assays:AssayRow"},
}


class Reshape(msgspec.Struct, frozen=True):
    """How a record's ``to_json()`` departs from its fields."""

    renamed: tuple[tuple[str, str], ...] = ()  # (field, key written)
    optional: tuple[str, ...] = ()  # left out when None
    flattened: str | None = None  # a field whose document's keys are written in its place
    dropped: tuple[str, ...] = ()  # fields not written


# By component (class) name. The documents these classes write are validated against
# the result wherever the JSON-keys tests read them (tests/cli/conftest.py).
RESHAPED: dict[str, Reshape] = {
    "Dilution": Reshape(renamed=(("source", "from"),)),
    "Concentration": Reshape(renamed=(("as_formula", "as"),)),
    "RunResult": Reshape(optional=("previous_status",)),
    "RunRecord": Reshape(optional=("replicates",)),
    "QueuedRun": Reshape(optional=("replicates",)),  # a RunRecord with its batch
    # `calc sample`'s keys first, then the assay's own (titrant_normality written once).
    "AssayResult": Reshape(flattened="computed", dropped=("titrant_normality",)),
}


# Names the services import for the type checker only (to start fast), which a field's
# annotation names: bound in their modules before the types are read, as the checker sees
# them. A new one shows as a NameError in tests/cli/test_schema.py.
CHECKER_NAMES: dict[str, tuple[str, ...]] = {
    L + "assays": (L + "sample_calcs:SampleCalc",),
    L + "calcs": ("prepbook.chem.stats:OutlierFlag", "prepbook.chem.uncertainty:BudgetLine",
                  "prepbook.rules.evaluation:StandardFacts"),
    L + "curves": ("prepbook.chem.indicators:IndicatorAdvice",),
    L + "sample_calcs": ("prepbook.chem.uncertainty:BudgetLine",),
    L + "equilibrium_calcs": ("prepbook.chem.indicators:IndicatorAdvice",
                              "prepbook.chem.salts:Strength"),
}


def commands() -> list[str]:
    """The commands that have a schema, in the order of the table."""
    return list(DOCUMENTS)


def load(ref: str) -> Any:
    """The type a ``DOCUMENTS`` reference names: ``module:Name`` (``Name`` may be a
    dotted path from the module), ``list:module:Name`` for a list of them."""
    many = ref.startswith("list:")
    module, _, path = ref.removeprefix("list:").partition(":")
    found: Any = importlib.import_module(module)
    for name in path.split("."):
        found = getattr(found, name)
    return list[found] if many else found


def _bind_checker_names() -> None:
    """Bind the ``CHECKER_NAMES`` of the service modules loaded so far."""
    for module_name, refs in CHECKER_NAMES.items():
        module = sys.modules.get(module_name)
        if module is None:
            continue
        for ref in refs:
            name = ref.rpartition(":")[2]
            if not hasattr(module, name):
                setattr(module, name, load(ref))


def _apply(components: dict[str, Any]) -> None:
    """Every written field required; the ``to_json()`` shapes of ``RESHAPED``."""
    for part in components.values():
        if "properties" in part:
            part["required"] = list(part["properties"])
    for name, how in RESHAPED.items():
        part = components.get(name)
        if part is None:
            continue
        props: dict[str, Any] = part["properties"]
        if how.flattened is not None:
            inner = components[props[how.flattened]["$ref"].rsplit("/", 1)[1]]
            own = {k: v for k, v in props.items()
                   if k != how.flattened and k not in how.dropped}
            props = {**inner["properties"], **own}
        for old, new in how.renamed:
            props = {new if k == old else k: v for k, v in props.items()}
        part["properties"] = props
        part["required"] = [k for k in props if k not in how.optional]


def _versioned(root: dict[str, Any], components: dict[str, Any]) -> dict[str, Any]:
    """A document that is an object, as ``emit_json`` writes it: its type's keys after
    ``version`` (the version of prepbook that wrote it), written out in place; its type
    stays in ``$defs`` only where another type holds it. A list is left as it is."""
    if "$ref" not in root:
        return root
    name = root["$ref"].rsplit("/", 1)[1]
    part = components[name]
    if "version" in part["properties"]:
        raise TypeError(f"{name} has a field 'version', the key every --json object "
                        "document begins with: rename the field")
    if f'"#/$defs/{name}"' not in json.dumps(components):
        del components[name]
    return {**part, "properties": {"version": VERSION_KEY, **part["properties"]},
            "required": ["version", *part["required"]]}


def schema(command: str) -> dict[str, Any]:
    """The JSON Schema of ``command``'s ``--json`` document (a KeyError if it has none)."""
    added = ADDED.get(command, {})
    types = [load(r) for r in (*DOCUMENTS[command], *added.values())]
    _bind_checker_names()
    made, components = msgspec.json.schema_components(types, ref_template="#/$defs/{name}")
    roots = list(made)
    if added:
        root = components[roots[0]["$ref"].rsplit("/", 1)[1]]
        extra = roots[-len(added):]
        del roots[-len(added):]
        root["properties"] = {**root["properties"], **dict(zip(added, extra, strict=True))}
    _apply(components)
    roots = [_versioned(root, components) for root in roots]
    body: dict[str, Any] = roots[0] if len(roots) == 1 else {"anyOf": roots}
    slug = command.replace(" ", "-")
    made_schema = {"$schema": DRAFT, "$id": f"urn:prepbook:{VERSION}:json:{slug}",
                   **body, "title": f"prepbook {command} --json", "version": VERSION}
    if components:
        made_schema["$defs"] = dict(sorted(components.items()))
    # As JSON has it (a field's default of () is the list []), the same as the file.
    return cast(dict[str, Any], msgspec.json.decode(msgspec.json.encode(made_schema)))


def file_name(command: str) -> str:
    """The file a command's schema is published as: ``batch-show.schema.json``."""
    return command.replace(" ", "-") + ".schema.json"


def as_text(document: dict[str, Any]) -> str:
    return json.dumps(document, indent=2, ensure_ascii=False) + "\n"


def write(folder: Path, chosen: list[str], *, replace: bool) -> list[Path]:
    """Write the schemas of ``chosen`` into ``folder``, one file each: all of them or,
    when one cannot be written (it exists unasked, the folder is missing), none."""
    from prepbook.render import files

    texts = {folder / file_name(c): as_text(schema(c)) for c in chosen}
    for path in texts:
        files.check_target(path, replace=replace)
    return [files.write_bytes(path, text.encode(), replace=replace)
            for path, text in texts.items()]
