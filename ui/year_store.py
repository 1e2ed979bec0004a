"""Year work kept in the store: scenarios and their case mixes, as plans are.

Saved, versioned, uploaded and downloaded. Presentation glue; the formats are
model.io.scenario and model.io.case_mix, the store model.store (its
``save``/``get``/``history``/``names`` API).

A saved scenario is kind ``scenario``: its TOML text, whose ``case_mix`` names a saved case
mix and its version as ``"<name>@<version>"``. A saved case mix is kind ``casemix``: its CSV
text, whose ``plan`` column names plans of the dashboard's plan library.
"""

from __future__ import annotations

import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, replace
from pathlib import Path

from model import InputError
from model.io.case_mix import case_mix_to_csv, parse_case_mix_text
from model.io.scenario import load_scenario, parse_scenario_text, scenario_to_toml
from model.io.uploads import check_upload
from model.plan import CasePlan
from model.store import Store
from model.year.inputs import CaseMix, Scenario

from . import year_views as yv

#: Added to a saved scenario's name in the choices (demo files keep their own names).
SAVED = " · saved"


@dataclass(frozen=True)
class Choice:
    """Where a scenario comes from: a demo file (``path``) or the store (``name``)."""

    kind: str  # "demo" or "saved"
    name: str
    path: Path | None = None


def choices(store: Store) -> dict[str, Choice]:
    """Every scenario a page can open, by the label it shows: demo files first, then saved ones."""
    out = {name: Choice("demo", name, path) for name, path in yv.scenario_files().items()}
    for name in store.names("scenario"):
        out[f"{name}{SAVED}"] = Choice("saved", name)
    return out


def _plan_finder(library: Mapping[str, CasePlan], source: str):
    def plan_for(name, where):
        if name not in library:
            raise InputError(where, name, "known plans are " + ", ".join(sorted(library)))
        return library[name]

    return plan_for


def mix_ref(name: str, version: int) -> str:
    """How a saved scenario names its saved case mix."""
    return f"{name}@{version}"


def load_mix(store: Store, ref: str, library: Mapping[str, CasePlan]) -> CaseMix:
    """A saved case mix by ``"<name>@<version>"`` (or its name alone: the latest version)."""
    name, _, version = ref.rpartition("@")
    if not (name and version.isdigit()):
        name, version = ref, ""
    body = store.get("casemix", name, int(version) if version else None).body
    where = f"saved case mix '{name}'" + (f" version {version}" if version else "")
    return parse_case_mix_text(body, where, _plan_finder(library, where))


def load(
    store: Store, choice: Choice, version: int | None = None, library: Mapping[str, CasePlan] | None = None
) -> Scenario:
    """The scenario of a choice (a saved one at ``version``, default its latest) with its case mix."""
    if choice.kind == "demo":
        return load_scenario(choice.path)
    library = library if library is not None else yv.plan_library()
    body = store.get("scenario", choice.name, version).body
    where = f"saved scenario '{choice.name}'" + (f" version {version}" if version else "")
    try:
        mix_field = str(tomllib.loads(body).get("case_mix", ""))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(where, "the text", f"not valid TOML ({exc})") from None
    return parse_scenario_text(body, where, case_mix=load_mix(store, mix_field, library))


def save(
    store: Store, scenario: Scenario, mix: CaseMix, name: str, note: str = "", author: str = ""
) -> tuple[int, int]:
    """Save the case mix and the scenario under ``name`` (a new version of each).

    Returns (scenario version, case-mix version). The scenario is saved as given (practice,
    prices, sampling, calendar), naming that version of the case mix.
    """
    name = name.strip()
    if not name:
        raise InputError("name", "empty", "give the year a name to save it under")
    mix_version = store.save("casemix", name, case_mix_to_csv(mix), note, author=author)
    text = scenario_to_toml(replace(scenario, name=name), mix_ref(name, mix_version))
    return store.save("scenario", name, text, note, author=author), mix_version


def scenario_file(scenario: Scenario, mix_file: str) -> str:
    """The scenario as a file to download, naming its case-mix file beside it."""
    return scenario_to_toml(scenario, mix_file)


def import_files(
    store: Store,
    scenario_upload: tuple[str, bytes] | None,
    mix_upload: tuple[str, bytes] | None,
    library: Mapping[str, CasePlan],
    author: str = "",
) -> tuple[str | None, str]:
    """Check uploaded files and save them in the store.

    Returns (the saved scenario's name or None, a line saying what was saved).

    A case mix alone is saved under its file name (without ``.csv``). A scenario needs its
    case mix: the one uploaded with it, or a saved case mix its ``case_mix`` names (by name,
    or by file name without ``.csv``). Everything is read before anything is saved, so a bad
    file leaves the store unchanged.
    """
    mix, mix_name = None, None
    if mix_upload is not None:
        up = check_upload(mix_upload[0], mix_upload[1], "casemix")
        mix_name = Path(up.name).stem
        mix = parse_case_mix_text(up.text, up.name, _plan_finder(library, up.name))
    scenario = None
    if scenario_upload is not None:
        up = check_upload(scenario_upload[0], scenario_upload[1], "scenario")
        try:
            wanted = str(tomllib.loads(up.text).get("case_mix", ""))
        except tomllib.TOMLDecodeError as exc:
            raise InputError(up.name, "the file", f"not valid TOML ({exc})") from None
        if mix is None:
            saved = set(store.names("casemix"))
            for candidate in (wanted, Path(wanted).stem, wanted.rpartition("@")[0]):
                if candidate and candidate in saved:
                    mix = load_mix(store, wanted if candidate == wanted.rpartition("@")[0] else candidate, library)
                    break
            else:
                raise InputError(
                    f"{up.name}: case_mix",
                    wanted,
                    "upload its case-mix file (CSV) with it, or save that case mix first",
                )
        scenario = parse_scenario_text(up.text, up.name, case_mix=mix)
    if scenario is not None:
        version, _ = save(store, scenario, mix, scenario.name, f"uploaded {scenario_upload[0]}", author=author)
        return scenario.name, f"Saved scenario '{scenario.name}' as version {version}, with its case mix."
    if mix is not None:
        version = store.save("casemix", mix_name, case_mix_to_csv(mix), f"uploaded {mix_upload[0]}", author=author)
        return None, (
            f"Saved case mix '{mix_name}' as version {version}; a scenario file naming "
            f'case_mix = "{mix_name}" can now be uploaded.'
        )
    return None, ""
