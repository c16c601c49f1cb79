"""Persistent application settings: a typed view over :class:`QSettings`.

Window geometry and state, the last folder, recent files, display options and the compute
settings.  A bad stored value falls back to its default with a logged warning.
"""
from __future__ import annotations

import json
import logging

from PySide6.QtCore import QSettings

from energy.errors import SettingsError
from energy.model.settings import EnergySettings

log = logging.getLogger(__name__)

ORGANIZATION = "Tessera"
APPLICATION = "Tessera"
SCHEMA_VERSION = 1
MAX_RECENT = 8
UNITS = ("kcal/mol", "kJ/mol")


class AppSettings:
    """Typed access to the stored settings (``QSettings()`` uses the application's names)."""

    def __init__(self, store: QSettings | None = None):
        self.store = store if store is not None else QSettings()
        stored = self.store.value("schema_version")
        if stored is not None and str(stored) != str(SCHEMA_VERSION):
            log.warning("settings schema %s differs from %s; using defaults", stored, SCHEMA_VERSION)
            self.store.clear()
        self.store.setValue("schema_version", SCHEMA_VERSION)

    # -- plain values ------------------------------------------------------------------
    def _get(self, key, default, kind):
        value = self.store.value(key)
        if value is None:
            return default
        try:
            if kind is bool:
                return value if isinstance(value, bool) else str(value).lower() in ("1", "true")
            return kind(value)
        except (TypeError, ValueError):
            log.warning("stored setting %s=%r is invalid; using %r", key, value, default)
            return default

    @property
    def unit(self) -> str:
        u = self._get("display/unit", UNITS[0], str)
        return u if u in UNITS else UNITS[0]

    @unit.setter
    def unit(self, value: str) -> None:
        self.store.setValue("display/unit", value)

    @property
    def clip_percentile(self) -> float:
        v = self._get("display/clip_percentile", 99.0, float)
        return v if 50.0 <= v <= 100.0 else 99.0

    @clip_percentile.setter
    def clip_percentile(self, value: float) -> None:
        self.store.setValue("display/clip_percentile", float(value))

    @property
    def last_dir(self) -> str:
        return self._get("files/last_dir", "", str)

    @last_dir.setter
    def last_dir(self, value: str) -> None:
        self.store.setValue("files/last_dir", value)

    # -- recent files: a JSON list of load specs -----------------------------------------
    def recent(self) -> list[dict]:
        raw = self._get("files/recent", "[]", str)
        try:
            items = json.loads(raw)
            return [d for d in items if isinstance(d, dict) and isinstance(d.get("structure"), str)]
        except (ValueError, TypeError):
            log.warning("stored recent-file list is invalid; starting a new one")
            return []

    def add_recent(self, spec: dict) -> None:
        items = [d for d in self.recent() if d != spec]
        items.insert(0, spec)
        self.store.setValue("files/recent", json.dumps(items[:MAX_RECENT]))

    # -- compute settings ----------------------------------------------------------------
    def energy_settings(self) -> EnergySettings:
        raw = self._get("compute/settings", "", str)
        if not raw:
            return EnergySettings()
        try:
            return EnergySettings(**json.loads(raw))
        except (ValueError, TypeError, SettingsError) as exc:
            log.warning("stored compute settings are invalid (%s); using defaults", exc)
            return EnergySettings()

    def has_energy_settings(self) -> bool:
        """True once compute settings were stored (the user chose them in some session)."""
        return bool(self._get("compute/settings", "", str))

    def set_energy_settings(self, settings: EnergySettings) -> None:
        self.store.setValue("compute/settings", json.dumps(settings.as_dict()))
