"""The user's config file: extra derating policies and the ranking weights.

TOML at ``platformdirs.user_config_dir("partsdb")/config.toml``; ``$PARTSDB_CONFIG`` names
another file. A missing file is not an error (built-in policies, default weights). Example::

    [policies.tube-radio]
    voltage = 0.7
    current = 0.7
    power = 0.5
    tj_margin = 25
    source = "our bench rule for valve-era sets"
    description = "Old sets run hot: more headroom"

    [weights]
    vceo = 25
    stock = 20

    [labels]            # defaults of `partsdb labels` (options win)
    paper = "letter"    # a4 or letter
    rows = 10
    columns = 3
    margin = 12         # mm, every side
    gap = 2             # mm between labels
    code = true         # a QR code of the place path on each label

    [stock]
    require_job = true  # every take names its job (CLI `stock take --job`, the TUI asks)

    [import.profiles.workshop]      # `partsdb import FILE --profile workshop`
    map = { "Art.-Nr." = "designation", "Fach" = "location" }
    unit = { ic_max = "mA", ft = "MHz" }
    ignore = ["Preis"]

Every error names the file, the key and the value.
"""

from __future__ import annotations

import os
import tomllib
from pathlib import Path
from typing import Any

from partsdb.derating import BUILTIN_POLICIES, DEFAULT_POLICY, Policy, PolicyError, policy_from_mapping
from partsdb.errors import InvalidInput
from partsdb.ranking import DEFAULT_WEIGHTS, SpecError, Weights

ENV_VAR = "PARTSDB_CONFIG"


class ConfigError(InvalidInput):
    """The config file cannot be used; the message names the file, key and value."""


def config_path() -> Path:
    """Where the config file is read from ($PARTSDB_CONFIG or the per-user config directory)."""
    env = os.environ.get(ENV_VAR)
    if env:
        return Path(env).expanduser()
    from platformdirs import user_config_dir

    return Path(user_config_dir("partsdb", appauthor=False)) / "config.toml"


def load_config(path: Path | None = None) -> dict[str, Any]:
    """The parsed file, or {} when it does not exist."""
    path = path or config_path()
    if not path.is_file():
        if os.environ.get(ENV_VAR) and path == config_path():
            raise ConfigError(f"{path}: not found (named by ${ENV_VAR})")
        return {}
    try:
        with path.open("rb") as fh:
            data = tomllib.load(fh)
    except tomllib.TOMLDecodeError as err:
        raise ConfigError(f"{path}: not valid TOML ({err})") from err
    except OSError as err:
        raise ConfigError(f"{path}: cannot be read ({err.strerror})") from err
    known = {"policies", "weights", "labels", "import", "stock"}
    unknown = sorted(set(data) - known)
    if unknown:
        raise ConfigError(f"{path}: unknown table(s) {', '.join(unknown)}; known: "
                          "policies, weights, labels, import, stock")
    return data


def user_policies(path: Path | None = None) -> dict[str, Policy]:
    path = path or config_path()
    data = load_config(path)
    tables = data.get("policies", {})
    if not isinstance(tables, dict):
        raise ConfigError(f"{path}: policies = {tables!r}; expected [policies.NAME] tables")
    out: dict[str, Policy] = {}
    for name, table in tables.items():
        if not isinstance(table, dict):
            raise ConfigError(f"{path}: policies.{name} = {table!r}; expected a table of factors")
        if name in BUILTIN_POLICIES:
            raise ConfigError(f"{path}: policies.{name}: the name is a built-in policy; "
                              "choose another name")
        try:
            out[name] = policy_from_mapping(name, table)
        except PolicyError as err:
            raise ConfigError(f"{path}: policies.{name}: {err}") from err
        # policy_from_mapping accepts any number for tj_cap; a cap must be a plausible °C.
        cap = table.get("tj_cap")
        if cap is not None and not -50 <= cap <= 300:
            raise ConfigError(f"{path}: policies.{name}.tj_cap = {cap!r}; expected a "
                              "temperature in °C between -50 and 300")
    return out


def available_policies(path: Path | None = None) -> dict[str, Policy]:
    """Built-in policies followed by the user's, by name."""
    return {**BUILTIN_POLICIES, **user_policies(path)}


def load_policy(name: str | None = None, path: Path | None = None) -> Policy:
    """The policy called ``name`` (default: the built-in default); ConfigError when unknown."""
    name = name or DEFAULT_POLICY
    if name in BUILTIN_POLICIES and path is None and not config_path().is_file():
        return BUILTIN_POLICIES[name]
    policies = available_policies(path)
    if name not in policies:
        raise ConfigError(f"policy: {name!r} is not known; expected one of "
                          f"{', '.join(policies)} (add your own under [policies.NAME] in "
                          f"{path or config_path()})")
    return policies[name]


def load_weights(path: Path | None = None) -> Weights:
    """Ranking weights: the defaults, with the config file's ``[weights]`` values on top."""
    path = path or config_path()
    data = load_config(path).get("weights")
    if data is None:
        return DEFAULT_WEIGHTS
    if not isinstance(data, dict):
        raise ConfigError(f"{path}: weights = {data!r}; expected a [weights] table")
    try:
        return Weights.from_mapping({**DEFAULT_WEIGHTS.as_dict(), **data})
    except (SpecError, TypeError) as err:
        raise ConfigError(f"{path}: {err}") from err


LABEL_KEYS: dict[str, type | tuple[type, ...]] = {
    "paper": str, "rows": int, "columns": int, "margin": (int, float), "gap": (int, float),
    "code": bool}


def load_label_settings(path: Path | None = None) -> dict[str, Any]:
    """The ``[labels]`` table (sheet layout defaults), checked key by key; {} when absent."""
    path = path or config_path()
    data = load_config(path).get("labels", {})
    if not isinstance(data, dict):
        raise ConfigError(f"{path}: labels = {data!r}; expected a [labels] table")
    for key, value in data.items():
        kind = LABEL_KEYS.get(key)
        if kind is None:
            raise ConfigError(f"{path}: labels.{key}: unknown key; known: {', '.join(LABEL_KEYS)}")
        if not isinstance(value, kind) or (kind is not bool and isinstance(value, bool)):
            raise ConfigError(f"{path}: labels.{key} = {value!r}; expected "
                              f"{'true or false' if kind is bool else 'text' if kind is str else 'a number'}")
    return dict(data)


def job_required(path: Path | None = None) -> bool:
    """Whether this shop's config requires a job reference on every take (``[stock]
    require_job = true``; default false)."""
    path = path or config_path()
    data = load_config(path).get("stock", {})
    if not isinstance(data, dict) or set(data) - {"require_job"}:
        raise ConfigError(f"{path}: stock: expected a [stock] table with require_job only")
    value = data.get("require_job", False)
    if not isinstance(value, bool):
        raise ConfigError(f"{path}: stock.require_job = {value!r}; expected true or false")
    return value


def check_job(job: str | None, action: str = "take", path: Path | None = None) -> None:
    """Refuse a take without a job reference when the config requires one (InvalidInput)."""
    if action == "take" and job_required(path) and not (job or "").strip():
        # No [brackets]: the TUI shows the message as markup.
        raise InvalidInput("job: empty; expected a job reference (the shop's config sets "
                           "stock.require_job = true: every take names its job)")


PROFILE_KEYS = ("map", "unit", "ignore", "ignore_unknown")


def load_import_profile(name: str, path: Path | None = None) -> dict[str, Any]:
    """The ``[import.profiles.NAME]`` table, checked: ``map`` (header = field), ``unit``
    (field = unit), ``ignore`` (list of headers), ``ignore_unknown`` (true/false)."""
    path = path or config_path()
    data = load_config(path).get("import", {})
    if not isinstance(data, dict) or set(data) - {"profiles"}:
        raise ConfigError(f"{path}: import: expected only [import.profiles.NAME] tables")
    profiles = data.get("profiles", {})
    if not isinstance(profiles, dict) or name not in profiles:
        known = ", ".join(profiles) if isinstance(profiles, dict) and profiles else "none"
        raise ConfigError(f"profile: {name!r} is not in {path}; known profiles: {known} "
                          "(add one under [import.profiles.NAME])")
    table = profiles[name]
    if not isinstance(table, dict):
        raise ConfigError(f"{path}: import.profiles.{name} = {table!r}; expected a table")
    where = f"{path}: import.profiles.{name}"
    for key, value in table.items():
        if key not in PROFILE_KEYS:
            raise ConfigError(f"{where}.{key}: unknown key; known: {', '.join(PROFILE_KEYS)}")
        if key in ("map", "unit") and not (isinstance(value, dict) and all(
                isinstance(k, str) and isinstance(v, str) for k, v in value.items())):
            raise ConfigError(f"{where}.{key} = {value!r}; expected a table of text values "
                              + ("(header = field)" if key == "map" else "(field = unit)"))
        if key == "ignore" and not (isinstance(value, list)
                                    and all(isinstance(v, str) for v in value)):
            raise ConfigError(f"{where}.ignore = {value!r}; expected a list of column headers")
        if key == "ignore_unknown" and not isinstance(value, bool):
            raise ConfigError(f"{where}.ignore_unknown = {value!r}; expected true or false")
    return dict(table)
