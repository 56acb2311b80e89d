"""Import layering: waveforms.io and the data records it builds import nothing from higher layers.

Consistency tests, no external source.  The layers, lowest first: errors, atomic, hashing, tomlfile,
capture, timebase and the nameplate record (waveforms.motor.nameplate, which imports only errors and
tomlfile); then waveforms.io; then measurement, speed, detection, the motor analysis, the simulator,
reports and commands.  The checks read the source (every import statement, also those inside
functions), so they do not depend on what happens to be imported already.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parent.parent / "waveforms"

#: Modules below waveforms.io that it may use.
IO_MAY_IMPORT = {
    "waveforms", "waveforms.errors", "waveforms.atomic", "waveforms.hashing", "waveforms.tomlfile",
    "waveforms.capture", "waveforms.timebase", "waveforms.motor.nameplate", "waveforms.segments",
}


def _module_name(path: Path) -> str:
    rel = path.relative_to(PKG.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _imports(path: Path, runtime_only: bool = True) -> list[tuple[int, str, tuple[str, ...]]]:
    """(line, absolute module, names) of every waveforms import in ``path``."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    skip: set[int] = set()
    if runtime_only:  # imports under `if TYPE_CHECKING:` are for annotations only
        for node in ast.walk(tree):
            if isinstance(node, ast.If) and isinstance(node.test, ast.Name) and node.test.id == "TYPE_CHECKING":
                skip |= {id(n) for b in node.body for n in ast.walk(b)}
    package = _module_name(path).split(".")
    if path.name != "__init__.py":
        package = package[:-1]
    out = []
    for node in ast.walk(tree):
        if id(node) in skip:
            continue
        if isinstance(node, ast.ImportFrom):
            base = package[: len(package) - node.level + 1] if node.level else []
            mod = ".".join(base + ([node.module] if node.module else []))
            names = tuple(a.name for a in node.names)
            if not node.module:  # from . import x  -> modules x
                out += [(node.lineno, f"{mod}.{n}", ()) for n in names]
            else:
                out.append((node.lineno, mod, names))
        elif isinstance(node, ast.Import):
            out += [(node.lineno, a.name, ()) for a in node.names]
    return [(ln, m, n) for ln, m, n in out if m == "waveforms" or m.startswith("waveforms.")]


IO_FILES = sorted((PKG / "io").glob("*.py"))


@pytest.mark.parametrize("path", IO_FILES, ids=lambda p: p.name)
def test_io_imports_only_lower_layers(path):
    bad = [f"line {ln}: {m}" for ln, m, _ in _imports(path) if not (m.startswith("waveforms.io") or m in IO_MAY_IMPORT)]
    assert not bad, f"{path.name} imports from a higher layer: {bad}"


@pytest.mark.parametrize("path", IO_FILES, ids=lambda p: p.name)
def test_importers_share_no_private_names(path):
    # shared helpers are public names in waveforms/io/common.py (or a format's own public API)
    bad = [f"line {ln}: {m}.{n}" for ln, m, names in _imports(path) for n in names
           if m.startswith("waveforms.io.") and n.startswith("_") and m != _module_name(path)]
    assert not bad, f"{path.name} imports another module's private names: {bad}"


@pytest.mark.parametrize(
    ("module", "allowed"),
    [
        ("capture.py", {"waveforms.errors"}),
        ("motor/nameplate.py", {"waveforms.errors", "waveforms.tomlfile"}),
        ("motor/__init__.py", set()),
        ("sim/__init__.py", set()),
    ],
)
def test_data_records_stay_at_the_bottom(module, allowed):
    found = {m for _, m, _ in _imports(PKG / module)}
    assert found <= allowed, f"{module} imports {sorted(found - allowed)} at run time"


def test_the_checker_sees_imports():
    # the checks above are only worth something if the parser finds imports at all
    assert "waveforms.motor.nameplate" in {m for _, m, _ in _imports(PKG / "io" / "hdf5_native.py")}
    assert "waveforms.io.common" in {m for _, m, _ in _imports(PKG / "io" / "hdf5_mapped.py")}
    assert "waveforms.motor.nameplate" in {m for _, m, _ in _imports(PKG / "capture.py", runtime_only=False)}
    assert "waveforms.sim.machine" in {m for _, m, _ in _imports(PKG / "motor" / "estimate.py")}
