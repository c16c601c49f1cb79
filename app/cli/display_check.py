"""Can Qt's platform plugin load?  Checked before the window's ``QApplication`` is created.

When a system library that Qt's platform plugin (``libqxcb.so`` on an X11 desktop) links to is
missing, Qt prints a generic "could not load the Qt platform plugin ... reinstalling the
application may fix this problem" and aborts.  :func:`diagnose` finds the missing libraries
from the plugin's own dependencies (``ldd`` resolves them exactly as the dynamic loader will)
and turns them into one line naming the libraries and the Debian/Ubuntu packages to install.

No Qt module is imported here (the command line reaches Qt only through the view command):
the plugin is found on disk, next to the installed PySide6.
"""
from __future__ import annotations

import importlib.util
import os
import re
import shutil
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

#: Debian/Ubuntu package of the shared libraries Qt's xcb and wayland plugins link to, by
#: soname.  Checked by hand on Debian 12 (``dpkg -S`` for installed libraries, ``apt-cache
#: show`` for the others, 2026-12-02).  A soname not listed here gets the name Debian's policy
#: gives a shared-library package (:func:`debian_package`).
DEBIAN_PACKAGES = {
    "libxcb-icccm.so.4": "libxcb-icccm4",
    "libxcb-keysyms.so.1": "libxcb-keysyms1",
    "libxcb-cursor.so.0": "libxcb-cursor0",
    "libxcb-image.so.0": "libxcb-image0",
    "libxcb-render-util.so.0": "libxcb-render-util0",
    "libxcb-util.so.1": "libxcb-util1",
    "libxcb-randr.so.0": "libxcb-randr0",
    "libxcb-render.so.0": "libxcb-render0",
    "libxcb-shape.so.0": "libxcb-shape0",
    "libxcb-shm.so.0": "libxcb-shm0",
    "libxcb-sync.so.1": "libxcb-sync1",
    "libxcb-xfixes.so.0": "libxcb-xfixes0",
    "libxcb-xkb.so.1": "libxcb-xkb1",
    "libxcb.so.1": "libxcb1",
    "libX11-xcb.so.1": "libx11-xcb1",
    "libX11.so.6": "libx11-6",
    "libxkbcommon.so.0": "libxkbcommon0",
    "libxkbcommon-x11.so.0": "libxkbcommon-x11-0",
    "libGL.so.1": "libgl1",
    "libEGL.so.1": "libegl1",
    "libfontconfig.so.1": "libfontconfig1",
    "libfreetype.so.6": "libfreetype6",
    "libglib-2.0.so.0": "libglib2.0-0",
    "libgthread-2.0.so.0": "libglib2.0-0",
    "libdbus-1.so.3": "libdbus-1-3",
    "libwayland-client.so.0": "libwayland-client0",
    "libwayland-cursor.so.0": "libwayland-cursor0",
    "libwayland-egl.so.1": "libwayland-egl1",
}

#: Libraries that ship inside the PySide6 wheel: when one of them is missing the installation
#: itself is broken, and no system package helps.
_BUNDLED = re.compile(r"^lib(Qt6|icu|pyside6|shiboken6)")

_NOT_FOUND = re.compile(r"^\s*(\S+)\s*=>\s*not found\s*$")


@dataclass(frozen=True)
class PluginCheck:
    """What was found about one platform plugin.

    Attributes
    ----------
    platform : str
        The platform's name, e.g. ``"xcb"``.
    plugin : pathlib.Path or None
        The plugin file, or None when it was not found.
    missing : tuple of str
        Sonames of the libraries the dynamic loader cannot find (empty when the plugin loads).
    """

    platform: str
    plugin: Path | None
    missing: tuple[str, ...]


def parse_ldd(text: str) -> tuple[str, ...]:
    """The libraries that ``ldd`` reports as ``not found``, each once, in the order met.

    Parameters
    ----------
    text : str
        The standard output of ``ldd FILE``.

    Returns
    -------
    tuple of str
        Sonames, e.g. ``("libxcb-icccm.so.4", "libxcb-keysyms.so.1")``.
    """
    seen: dict[str, None] = {}
    for line in text.splitlines():
        m = _NOT_FOUND.match(line)
        if m:
            seen.setdefault(m.group(1), None)
    return tuple(seen)


def debian_package(soname: str) -> str:
    """The Debian/Ubuntu package that ships the shared library ``soname``.

    From :data:`DEBIAN_PACKAGES`; otherwise the name Debian's policy gives a shared-library
    package (Debian Policy Manual, section 8.1: the library's name and its soname version,
    lower case, with a hyphen between them when the name ends in a digit), e.g.
    ``libfoo.so.3`` -> ``libfoo3``, ``libfoo-x11.so.0`` -> ``libfoo-x11-0``.

    Parameters
    ----------
    soname : str
        e.g. ``"libxcb-icccm.so.4"``.

    Returns
    -------
    str
        The package name.
    """
    if soname in DEBIAN_PACKAGES:
        return DEBIAN_PACKAGES[soname]
    m = re.match(r"^(lib.+?)\.so\.(\d+)", soname)
    if not m:
        return soname.split(".so")[0].lower()
    name, version = m.group(1).lower(), m.group(2)
    return f"{name}-{version}" if name[-1].isdigit() else f"{name}{version}"


def candidate_platforms(environ=None) -> list[str]:
    """The platform plugins Qt will try, in order: ``QT_QPA_PLATFORM`` when set (a ``;``-list,
    each entry possibly with ``:options``), else ``wayland`` then ``xcb`` in a Wayland session,
    else ``xcb``."""
    env = os.environ if environ is None else environ
    forced = env.get("QT_QPA_PLATFORM", "").strip()
    if forced:
        return [p.split(":", 1)[0].strip() for p in forced.split(";") if p.strip()]
    if env.get("XDG_SESSION_TYPE") == "wayland" or (env.get("WAYLAND_DISPLAY") and not env.get("DISPLAY")):
        return ["wayland", "xcb"]
    return ["xcb"]


def plugin_directories(environ=None) -> list[Path]:
    """Folders Qt searches for platform plugins, in Qt's order: ``QT_QPA_PLATFORM_PLUGIN_PATH``,
    ``platforms/`` under each ``QT_PLUGIN_PATH`` entry, then the installed PySide6's own."""
    env = os.environ if environ is None else environ
    dirs = []
    if env.get("QT_QPA_PLATFORM_PLUGIN_PATH"):
        dirs.append(Path(env["QT_QPA_PLATFORM_PLUGIN_PATH"]))
    for entry in env.get("QT_PLUGIN_PATH", "").split(os.pathsep):
        if entry:
            dirs.append(Path(entry) / "platforms")
    spec = importlib.util.find_spec("PySide6")
    if spec is not None and spec.submodule_search_locations:
        dirs.append(Path(list(spec.submodule_search_locations)[0]) / "Qt" / "plugins" / "platforms")
    return dirs


def find_plugin(platform: str, environ=None) -> Path | None:
    """The file of platform plugin ``platform`` (``libq<platform>.so``), or None."""
    for d in plugin_directories(environ):
        f = d / f"libq{platform}.so"
        if f.is_file():
            return f
    return None


def missing_libraries(library: Path, ldd: str | None = None) -> tuple[str, ...] | None:
    """Sonames the dynamic loader cannot find for ``library`` and everything it links to.

    Parameters
    ----------
    library : pathlib.Path
        A shared library, e.g. Qt's ``libqxcb.so``.
    ldd : str, optional
        The ``ldd`` program (default: found on ``PATH``).

    Returns
    -------
    tuple of str or None
        The missing sonames (empty when all are found); None when ``ldd`` is not there or fails,
        so that nothing is known.
    """
    ldd = ldd or shutil.which("ldd")
    if ldd is None:
        return None
    try:
        proc = subprocess.run([ldd, str(library)], capture_output=True, text=True, timeout=20)
    except (OSError, subprocess.TimeoutExpired):
        return None
    if proc.returncode != 0 and "not found" not in proc.stdout:
        return None
    return parse_ldd(proc.stdout)


def check_platforms(environ=None) -> list[PluginCheck]:
    """Check each platform Qt will try (:func:`candidate_platforms`)."""
    out = []
    for platform in candidate_platforms(environ):
        plugin = find_plugin(platform, environ)
        missing = missing_libraries(plugin) if plugin is not None else None
        out.append(PluginCheck(platform, plugin, missing or ()))
    return out


def install_advice(missing: tuple[str, ...], platform: str = "xcb") -> str:
    """One line naming the missing libraries and what to install.

    Parameters
    ----------
    missing : tuple of str
        Sonames the plugin needs and the system lacks.
    platform : str
        The plugin's platform, for the message.

    Returns
    -------
    str
        e.g. ``"the window cannot open: Qt's xcb platform plugin needs libxcb-icccm.so.4,
        libxcb-keysyms.so.1, which are not installed; install: sudo apt-get install
        libxcb-icccm4 libxcb-keysyms1 (other systems: README, Quick start)"``.
    """
    bundled = [s for s in missing if _BUNDLED.match(s)]
    system = [s for s in missing if not _BUNDLED.match(s)]
    parts = []
    if system:
        packages = list(dict.fromkeys(debian_package(s) for s in system))
        parts.append(f"the window cannot open: Qt's {platform} platform plugin needs "
                     f"{', '.join(system)}, which {'is' if len(system) == 1 else 'are'} not installed; "
                     f"install: sudo apt-get install {' '.join(packages)} "
                     "(other systems: the packages that provide these files; README, Quick start)")
    if bundled:
        parts.append(f"{'' if system else 'the window cannot open: '}PySide6's own {', '.join(bundled)} "
                     "cannot be found; reinstall it: pip install --force-reinstall PySide6")
    return "; ".join(parts)


def diagnose(environ=None) -> str | None:
    """None when the window's platform plugin can load (or nothing can be known: not Linux, no
    ``ldd``, no plugin file found); otherwise the one-line advice of :func:`install_advice` for
    the first platform Qt would try."""
    if not sys.platform.startswith("linux"):
        return None
    checks = check_platforms(environ)
    if not checks or any(c.plugin is None or not c.missing for c in checks):
        return None
    first = checks[0]
    return install_advice(first.missing, first.platform)


def main() -> int:
    """``python -m app.cli.display_check``: print the advice and exit 2, or exit 0 silently."""
    advice = diagnose()
    if advice:
        print(f"tessera: {advice}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
