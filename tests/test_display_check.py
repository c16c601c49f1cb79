"""The start-up check of the window (app/cli/display_check.py): which system libraries Qt's
platform plugin lacks, and the one-line advice ``tessera view`` prints before any QApplication.

References outside our code: the dynamic loader itself (glibc's ``dlopen`` through ctypes) says
whether a plugin loads and names the first library it cannot find; Debian's package database
(``dpkg -S``) says which package ships an installed library.
"""
from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from data import REPO

from app.cli import display_check as dc

#: ``ldd .../PySide6/Qt/plugins/platforms/libqxcb.so`` on Debian 12 with PySide6 6.11.3 before
#: libxcb-icccm4 and libxcb-keysyms1 were installed (the state of issue 21), lines as printed
#: (a selection of the 60 lines: the first ones, both "not found" blocks and the last one).
LDD_BEFORE_INSTALL = """\
\tlinux-vdso.so.1 (0x00007fa5e5a71000)
\tlibQt6XcbQpa.so.6 => /venv/PySide6/Qt/plugins/platforms/../../lib/libQt6XcbQpa.so.6 (0x00007fa5e59a3000)
\tlibGL.so.1 => /lib/x86_64-linux-gnu/libGL.so.1 (0x00007fa5e5913000)
\tlibxcb-cursor.so.0 => /lib/x86_64-linux-gnu/libxcb-cursor.so.0 (0x00007fa5e4da8000)
\tlibxcb-icccm.so.4 => not found
\tlibxcb-util.so.1 => /lib/x86_64-linux-gnu/libxcb-util.so.1 (0x00007fa5e4da0000)
\tlibxcb-image.so.0 => /lib/x86_64-linux-gnu/libxcb-image.so.0 (0x00007fa5e4d9a000)
\tlibxcb-keysyms.so.1 => not found
\tlibxcb-randr.so.0 => /lib/x86_64-linux-gnu/libxcb-randr.so.0 (0x00007fa5e4d89000)
\tlibc.so.6 => /lib/x86_64-linux-gnu/libc.so.6 (0x00007fa5e3c1e000)
\tlibxcb-icccm.so.4 => not found
\tlibxcb-keysyms.so.1 => not found
\t/lib64/ld-linux-x86-64.so.2 (0x00007fa5e5a73000)
"""

PLUGIN = dc.find_plugin("xcb", {})
needs_plugin = pytest.mark.skipif(PLUGIN is None or shutil.which("ldd") is None,
                                  reason="no PySide6 xcb plugin or no ldd on this system")


def test_parse_ldd_lists_each_missing_library_once_in_order():
    assert dc.parse_ldd(LDD_BEFORE_INSTALL) == ("libxcb-icccm.so.4", "libxcb-keysyms.so.1")
    assert dc.parse_ldd(LDD_BEFORE_INSTALL.replace(" => not found", " => /lib/x.so (0x1)")) == ()


def test_advice_is_one_line_with_the_packages_of_issue_21():
    # issue 21: libxcb-icccm4 and libxcb-keysyms1 were missing; libxcb-cursor0 on other systems
    line = dc.install_advice(("libxcb-icccm.so.4", "libxcb-keysyms.so.1", "libxcb-cursor.so.0"))
    assert "\n" not in line
    assert "libxcb-icccm.so.4, libxcb-keysyms.so.1, libxcb-cursor.so.0" in line
    assert "install: sudo apt-get install libxcb-icccm4 libxcb-keysyms1 libxcb-cursor0" in line


def test_a_missing_qt_library_asks_for_a_pyside6_reinstall_not_a_system_package():
    line = dc.install_advice(("libQt6XcbQpa.so.6",))
    assert "apt-get" not in line and "pip install --force-reinstall PySide6" in line


def test_package_names_follow_debian_policy_for_unlisted_libraries():
    # Debian Policy Manual 8.1: package = library name + soname version, hyphen after a digit
    assert dc.debian_package("libfoo.so.3") == "libfoo3"
    assert dc.debian_package("libfoo-x11.so.0") == "libfoo-x11-0"
    assert dc.debian_package("libXfoo.so.6") == "libxfoo6"


def _loader_cache() -> dict[str, str]:
    """soname -> path from the dynamic loader's cache (``ldconfig -p``)."""
    ldconfig = shutil.which("ldconfig") or "/sbin/ldconfig"
    proc = subprocess.run([ldconfig, "-p"], capture_output=True, text=True)
    out = {}
    for line in proc.stdout.splitlines()[1:]:
        if "=>" in line:
            name, path = line.split("=>", 1)
            path = path.strip()     # the real folder: /lib is a link to /usr/lib on merged-/usr systems
            out.setdefault(name.split("(")[0].strip(),
                           os.path.join(os.path.realpath(os.path.dirname(path)), os.path.basename(path)))
    return out


@pytest.mark.skipif(shutil.which("dpkg") is None, reason="not a Debian/Ubuntu system")
def test_package_table_matches_the_package_database_for_installed_libraries():
    cache = _loader_cache()
    installed = {s: cache[s] for s in dc.DEBIAN_PACKAGES if s in cache}
    proc = subprocess.run(["dpkg", "-S", *installed.values()], capture_output=True, text=True)
    owner_of = {}
    for line in proc.stdout.splitlines():     # "libxcb1:amd64: /lib/x86_64-linux-gnu/libxcb.so.1"
        owners, path = line.rsplit(": ", 1)
        owner_of[path.strip()] = {o.split(":")[0].strip() for o in owners.split(",")}
    checked = 0
    for soname, path in installed.items():
        if path in owner_of:        # files outside any package (built by hand) are not judged
            assert dc.DEBIAN_PACKAGES[soname] in owner_of[path], (soname, owner_of[path])
            checked += 1
    assert checked >= 10     # most of the table is installed on a machine where PySide6 runs


def test_candidate_platforms_follow_the_environment():
    assert dc.candidate_platforms({}) == ["xcb"]
    assert dc.candidate_platforms({"QT_QPA_PLATFORM": "offscreen"}) == ["offscreen"]
    assert dc.candidate_platforms({"QT_QPA_PLATFORM": "wayland;xcb:foo=1"}) == ["wayland", "xcb"]
    assert dc.candidate_platforms({"XDG_SESSION_TYPE": "wayland", "WAYLAND_DISPLAY": "wayland-0"}) \
        == ["wayland", "xcb"]


def _dlopen(library: Path) -> subprocess.CompletedProcess:
    """Load ``library`` with the dynamic loader in a fresh process (the reference)."""
    return subprocess.run([sys.executable, "-c", "import ctypes, sys; ctypes.CDLL(sys.argv[1])", str(library)],
                          capture_output=True, text=True, timeout=60)


@needs_plugin
def test_the_real_xcb_plugin_agrees_with_the_dynamic_loader():
    missing = dc.missing_libraries(PLUGIN)
    loaded = _dlopen(PLUGIN)
    if missing:
        assert loaded.returncode != 0
        first = loaded.stderr.strip().splitlines()[-1].split("OSError: ")[-1].split(":")[0]
        assert first in missing, loaded.stderr
    else:
        assert loaded.returncode == 0, loaded.stderr


def _plugin_needing(tmp_path: Path, present: bytes, absent: bytes) -> Path:
    """A copy of the real xcb plugin whose dependency ``present`` is renamed to ``absent`` (same
    length: only the string table changes), in a folder tree where its ``$ORIGIN/../../lib``
    run path still reaches PySide6's Qt libraries."""
    assert len(present) == len(absent)
    data = PLUGIN.read_bytes()
    assert data.count(present + b"\0") == 1
    platforms = tmp_path / "plugins" / "platforms"
    platforms.mkdir(parents=True)
    (tmp_path / "lib").symlink_to(PLUGIN.parents[2] / "lib")
    patched = platforms / PLUGIN.name
    patched.write_bytes(data.replace(present + b"\0", absent + b"\0"))
    return patched


@needs_plugin
def test_view_exits_2_with_one_line_before_qt_starts(tmp_path):
    patched = _plugin_needing(tmp_path, b"libxcb-cursor.so.0", b"libtessera-zz.so.0")
    loaded = _dlopen(patched)
    assert loaded.returncode != 0 and "libtessera-zz.so.0" in loaded.stderr   # the loader agrees
    env = {**os.environ, "QT_QPA_PLATFORM": "xcb", "QT_QPA_PLATFORM_PLUGIN_PATH": str(patched.parent),
           "DISPLAY": ":0", "PYTHONPATH": REPO}
    proc = subprocess.run([sys.executable, "-m", "app", "view"], capture_output=True, text=True, env=env,
                          cwd=REPO, timeout=120)
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1, proc.stderr          # not Qt's own multi-line message
    assert "libtessera-zz.so.0" in lines[0]
    assert "sudo apt-get install" in lines[0] and "libtessera-zz0" in lines[0]
    # the libraries the real system lacks are named too (none once they are installed)
    for soname in dc.missing_libraries(PLUGIN) or ():
        assert soname in lines[0]
