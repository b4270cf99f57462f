"""A wheel of the running widgetkit, built offline, for a referee to install exactly.

:func:`build_wheel` packs the code that is running (every file of the imported
``widgetkit`` package except caches) into a standard wheel (the binary package
format of Python packaging, PEP 427; pure Python, tag ``py3-none-any``) with its
metadata, licence and ``widgetkit`` command. No registry, no build tool and no
network are involved, and the bytes depend only on the files: the same code gives
the same wheel and so the same sha256 (fixed time stamps, sorted entries).

The metadata (name, version, summary, licence, Python requirement, dependencies)
comes from ``pyproject.toml`` when widgetkit runs from a source checkout (read
with ``tomllib``, Python ≥ 3.11), else from the installed distribution's own
metadata of the same version.
"""

from __future__ import annotations

import base64
import hashlib
import io
import re
import subprocess
import zipfile
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path

__all__ = ["WheelInfo", "build_wheel", "package_files", "dependency_names"]

_EPOCH = (1980, 1, 1, 0, 0, 0)  # the earliest time a zip entry can hold: reproducible bytes
_WHEEL = ("Wheel-Version: 1.0\nGenerator: widgetkit (report bundle)\nRoot-Is-Purelib: true\n"
          "Tag: py3-none-any\n")
_ENTRY_POINTS = "[console_scripts]\nwidgetkit = widgetkit.cli:main\n"


@dataclass(frozen=True)
class WheelInfo:
    """A built wheel: ``path``, ``sha256`` of its bytes, ``version``, and ``origin`` (where its
    code came from: the package folder, and the git commit of a checkout when known)."""

    path: Path
    sha256: str
    version: str
    origin: str


def _package_dir() -> Path:
    import widgetkit

    return Path(widgetkit.__file__).resolve().parent


def package_files(root: Path | None = None) -> list[Path]:
    """The files of the package folder that go into the wheel (sorted; no caches, no hidden
    files, no editor backups)."""
    root = root or _package_dir()
    out = []
    for p in sorted(root.rglob("*")):
        rel = p.relative_to(root.parent)
        if not p.is_file() or "__pycache__" in rel.parts or p.suffix in (".pyc", ".pyo"):
            continue
        if any(part.startswith(".") for part in rel.parts) or p.name.endswith("~"):
            continue
        out.append(p)
    return out


def _from_pyproject(checkout: Path) -> tuple[str, str | None] | None:
    """(METADATA text, licence text) from a checkout's pyproject.toml, or None."""
    try:
        import tomllib
    except ImportError:  # Python 3.10: use the installed metadata instead
        return None
    try:
        project = tomllib.loads((checkout / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    except (OSError, KeyError, ValueError):
        return None
    if project.get("name") != "widgetkit":
        return None
    lines = ["Metadata-Version: 2.4", f"Name: {project['name']}", f"Version: {project['version']}"]
    if project.get("description"):
        lines.append(f"Summary: {project['description']}")
    lic = project.get("license")
    if isinstance(lic, str):
        lines.append(f"License-Expression: {lic}")
    if project.get("requires-python"):
        lines.append(f"Requires-Python: {project['requires-python']}")
    lines += [f"Requires-Dist: {d}" for d in project.get("dependencies", [])]
    licence = checkout / "LICENSE"
    return "\n".join(lines) + "\n", (licence.read_text(encoding="utf-8") if licence.is_file()
                                     else None)


def _from_installed(version: str) -> tuple[str, str | None] | None:
    try:
        dist = metadata.distribution("widgetkit")
    except metadata.PackageNotFoundError:
        return None
    if dist.version != version:
        return None
    text = dist.read_text("METADATA")
    licence = None
    for f in dist.files or []:
        if f.name.upper().startswith("LICENSE"):
            licence = f.read_text(encoding="utf-8")
            break
    return (text, licence) if text else None


def _metadata(version: str) -> tuple[str, str | None]:
    """(METADATA text, licence text) of the running widgetkit (see the module docstring)."""
    return (_from_pyproject(_package_dir().parent) or _from_installed(version)
            or (f"Metadata-Version: 2.1\nName: widgetkit\nVersion: {version}\n", None))


def dependency_names() -> list[str]:
    """The names of the packages the running widgetkit requires (its ``Requires-Dist``
    without extras), in the order its metadata lists them."""
    import widgetkit

    out = []
    for line in _metadata(widgetkit.__version__)[0].splitlines():
        if line.startswith("Requires-Dist:") and "extra ==" not in line:
            m = re.match(r"\s*([A-Za-z0-9][A-Za-z0-9._-]*)", line.split(":", 1)[1])
            if m:
                out.append(m[1])
    return out


def _git_origin(checkout: Path) -> str:
    if not (checkout / ".git").exists():
        return ""
    try:
        head = subprocess.run(["git", "-C", str(checkout), "rev-parse", "HEAD"], capture_output=True,
                              text=True, timeout=10).stdout.strip()
        dirty = subprocess.run(["git", "-C", str(checkout), "status", "--porcelain", "--",
                                "widgetkit"], capture_output=True, text=True, timeout=10).stdout
    except (OSError, subprocess.SubprocessError):
        return ""
    if not head:
        return ""
    return f", git commit {head}" + (" with uncommitted changes to the package" if dirty.strip()
                                     else "")


def _record_line(name: str, data: bytes) -> str:
    digest = base64.urlsafe_b64encode(hashlib.sha256(data).digest()).rstrip(b"=").decode()
    return f"{name},sha256={digest},{len(data)}"


def _add(zf: zipfile.ZipFile, name: str, data: bytes) -> None:
    info = zipfile.ZipInfo(name, date_time=_EPOCH)
    info.external_attr = 0o644 << 16
    info.compress_type = zipfile.ZIP_DEFLATED
    zf.writestr(info, data)


def build_wheel(folder) -> WheelInfo:
    """Build ``widgetkit-<version>-py3-none-any.whl`` of the running code into ``folder``.

    Returns
    -------
    WheelInfo
    """
    import widgetkit

    version = widgetkit.__version__
    root = _package_dir()
    checkout = root.parent
    meta = _metadata(version)
    dist_info = f"widgetkit-{version}.dist-info"
    entries = [(p.relative_to(checkout).as_posix(), p.read_bytes()) for p in package_files(root)]
    entries += [(f"{dist_info}/METADATA", meta[0].encode("utf-8")),
                (f"{dist_info}/WHEEL", _WHEEL.encode()),
                (f"{dist_info}/entry_points.txt", _ENTRY_POINTS.encode())]
    if meta[1]:
        entries.append((f"{dist_info}/licenses/LICENSE", meta[1].encode("utf-8")))
    record = "\n".join([*(_record_line(n, d) for n, d in entries), f"{dist_info}/RECORD,,"]) + "\n"
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        for name, data in entries:
            _add(zf, name, data)
        _add(zf, f"{dist_info}/RECORD", record.encode())
    data = buf.getvalue()
    out = Path(folder) / f"widgetkit-{version}-py3-none-any.whl"
    from .write import atomic_write

    atomic_write(out, data)
    return WheelInfo(path=out, sha256=hashlib.sha256(data).hexdigest(), version=version,
                     origin="built from the running widgetkit code" + _git_origin(checkout))
