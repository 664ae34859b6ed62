"""Project configuration: options and limits from ``meshaudit.toml`` or ``pyproject.toml``.

Discovery: starting in the mesh file's directory and walking up to the filesystem root,
the first directory holding a ``meshaudit.toml``, or a ``pyproject.toml`` with a
``[tool.meshaudit]`` table, gives the configuration (``meshaudit.toml`` wins when a
directory has both). When nothing is found above the mesh, the same walk starts from the
working directory. Command-line options override the file.

Layout (``meshaudit.toml``; in ``pyproject.toml`` the same keys sit under
``[tool.meshaudit]``)::

    fail_on = "fail"                 # or "warn"
    top = 10                         # worst elements listed
    cluster = "tcp://host:8786"      # Dask scheduler for partitioned meshes (--cluster)
    json = "reports/{stem}.json"     # report paths, relative to this file; {stem} = mesh name
    profile = "standard"             # a built-in or a profile TOML file, or instead:
    [limits]                         # a profile in the layout of meshaudit.judge.profiles
    extends = "standard"
    [limits.quad]
    aspect_ratio = { warn = 4, fail = 8 }
    [regions.fillet]                 # elements of the physical group / element set "fillet"
    extends = "strict"               # without extends: starts from [limits]
    [compare]                        # regression tolerances of `meshaudit compare`
    median_score_drop = 0.02
    [materials.default]              # stiffness metrics (see meshaudit.material)
    E = 210000.0                     # consistent units: N/mm^2, tonne/mm^3, mm -> s
    nu = 0.3
    rho = 7.85e-9
    t = 2.0                          # thickness of surface elements; plane = "strain"
    [materials.fillet]               # another material for a region
    E = 70000.0
    nu = 0.33
    rho = 2.7e-9
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import Any

from ..errors import InputError, ProfileError
from ..judge.profiles import FAMILIES, Profile, load_profile, profile_from_dict, toml_module
from ..material import Material, materials_table
from ..paths import reason
from ..results.compare import Tolerances

CONFIG_NAME = "meshaudit.toml"
REPORT_KINDS = ("json", "csv", "junit")
OPTION_KEYS = ("fail_on", "top", "profile", "cluster", *REPORT_KINDS)
TABLE_KEYS = ("limits", "regions", "compare", "materials")


class ConfigError(ProfileError):
    """A configuration file is unreadable or malformed."""


@dataclass(frozen=True)
class Settings:
    """Everything a configuration file can set; ``None`` means "not set here"."""

    path: Path | None = None
    profile: Profile | None = None
    regions: dict[str, Profile] = field(default_factory=dict)
    fail_on: str | None = None
    top: int | None = None
    reports: dict[str, str] = field(default_factory=dict)  # kind -> path template
    tolerances: Tolerances = field(default_factory=Tolerances)
    #: region name (``default``: every other element) -> material (see meshaudit.material)
    materials: dict[str, Material] = field(default_factory=dict)
    #: Dask scheduler address partitioned meshes are audited on (``cluster = "tcp://..."``)
    cluster: str | None = None

    @property
    def base_dir(self) -> Path:
        return self.path.parent if self.path is not None else Path(".")


def _read_toml(path: Path) -> dict[str, Any]:
    tomllib = toml_module()
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise ConfigError(f"{path}: cannot read configuration: {reason(exc)}") from None
    except UnicodeDecodeError as exc:
        raise ConfigError(f"{path}: cannot read configuration: {exc}") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML: {exc}") from None


def _table_in(path: Path) -> dict[str, Any] | None:
    """The meshaudit table of a candidate file, or None when it has none."""
    data = _read_toml(path)
    if path.name == CONFIG_NAME:
        return data
    tool = data.get("tool", {})
    table = tool.get("meshaudit") if isinstance(tool, dict) else None
    if table is not None and not isinstance(table, dict):
        raise ConfigError(f"{path}: [tool.meshaudit] must be a table")
    return table


def find_config(start: Path) -> Path | None:
    """The first configuration file in ``start`` or one of its parents, else None."""
    here = Path(os.path.realpath(start))  # never raises, even on a link loop
    for folder in (here, *here.parents):
        for name in (CONFIG_NAME, "pyproject.toml"):
            candidate = folder / name
            if os.path.isfile(candidate) and _table_in(candidate) is not None:
                return candidate
    return None


def discover(mesh: Path | None, cwd: Path | None = None) -> Path | None:
    """Configuration for ``mesh``: upward from its directory, then from the working one."""
    if mesh is not None:
        found = find_config(mesh.parent if str(mesh.parent) else Path("."))
        if found is not None:
            return found
    return find_config(cwd if cwd is not None else Path.cwd())


def load_settings(path: Path) -> Settings:
    """Parse and check the configuration file ``path``."""
    table = _table_in(path)
    if table is None:
        raise ConfigError(f"{path}: no [tool.meshaudit] table")
    return settings_from_dict(table, path)


def settings_from_dict(data: dict[str, Any], path: Path) -> Settings:
    """Build :class:`Settings` from a parsed meshaudit table (see the module docstring)."""
    where = str(path)
    unknown = sorted(set(data) - set(OPTION_KEYS) - set(TABLE_KEYS))
    if unknown:
        raise ConfigError(f"{where}: unknown key {unknown[0]!r}")
    fail_on = data.get("fail_on")
    if fail_on is not None and fail_on not in ("fail", "warn"):
        raise ConfigError(f"{where}: fail_on must be 'fail' or 'warn', not {fail_on!r}")
    top = data.get("top")
    if top is not None and (isinstance(top, bool) or not isinstance(top, int) or top < 0):
        raise ConfigError(f"{where}: top must be a whole number 0 or more, not {top!r}")
    reports = {}
    for kind in REPORT_KINDS:
        if kind in data:
            if not isinstance(data[kind], str) or not data[kind]:
                raise ConfigError(f"{where}: {kind} must be a file path (text)")
            reports[kind] = data[kind]
    cluster = data.get("cluster")
    if cluster is not None and (not isinstance(cluster, str) or not cluster):
        raise ConfigError(f"{where}: cluster must be a scheduler address (text)")
    profile = _base_profile(data, path)
    regions = _regions(data.get("regions", {}), profile, where)
    return Settings(
        path=path,
        profile=profile,
        regions=regions,
        fail_on=fail_on,
        top=top,
        reports=reports,
        tolerances=_tolerances(data.get("compare", {}), where),
        materials=_materials(data.get("materials", {}), where),
        cluster=cluster,
    )


def _base_profile(data: dict[str, Any], path: Path) -> Profile | None:
    where = str(path)
    if "profile" in data and "limits" in data:
        raise ConfigError(f"{where}: give either profile or [limits], not both")
    if "limits" in data:
        if not isinstance(data["limits"], dict):
            raise ConfigError(f"{where}: [limits] must be a table")
        limits = {"name": f"{path.name} limits", **data["limits"]}
        return profile_from_dict(limits, f"{where} [limits]")
    if "profile" in data:
        spec = data["profile"]
        if not isinstance(spec, str):
            raise ConfigError(f"{where}: profile must be a name or a file path")
        candidate = path.parent / spec
        return load_profile(candidate if os.path.isfile(candidate) else spec)
    return None


def _regions(table: Any, base: Profile | None, where: str) -> dict[str, Profile]:
    if not isinstance(table, dict):
        raise ConfigError(f"{where}: [regions] must hold one table per region name")
    regions = {}
    for name, spec in table.items():
        if not isinstance(spec, dict):
            raise ConfigError(f"{where}: [regions.{name}] must be a table")
        start = spec.get("extends") or (base.name if base is not None else "standard")
        overrides = " with overrides" if any(f in spec for f in FAMILIES) else ""
        spec = {"name": f"region {name}", "description": f"{start}{overrides}", **spec}
        regions[name] = profile_from_dict(spec, f"{where} [regions.{name}]", base=base)
    return regions


def _materials(table: Any, where: str) -> dict[str, Material]:
    try:
        return materials_table(table, where)
    except InputError as exc:
        raise ConfigError(str(exc)) from None


def _tolerances(table: Any, where: str) -> Tolerances:
    if not isinstance(table, dict):
        raise ConfigError(f"{where}: [compare] must be a table")
    allowed = {f.name: f.type for f in fields(Tolerances)}
    values: dict[str, Any] = {}
    for key, value in table.items():
        if key not in allowed:
            raise ConfigError(f"{where}: [compare] has unknown key {key!r}")
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not value >= 0:
            raise ConfigError(f"{where}: compare.{key} must be a number 0 or more")
        if key == "new_failing" and not isinstance(value, int):
            raise ConfigError(f"{where}: compare.new_failing must be a whole number")
        values[key] = value
    return Tolerances(**values)


def settings_for(
    mesh: Path | None, explicit: Path | None = None, use_files: bool = True
) -> Settings:
    """The settings that apply to ``mesh``: the explicit file, else the discovered one."""
    if explicit is not None:
        return load_settings(explicit)
    if not use_files:
        return Settings()
    found = discover(mesh)
    return load_settings(found) if found is not None else Settings()
