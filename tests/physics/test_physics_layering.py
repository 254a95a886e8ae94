"""The physics layer stays pure: no GIS, CLI or cluster imports and no file access.

design.md section 5: geomelt/physics holds array functions only; reading and writing
files is the job of geomelt/io and parallelism the job of geomelt/pipeline.
"""

from __future__ import annotations

import ast
import pkgutil
import re
import subprocess
import sys
from pathlib import Path

import pytest

import geomelt.physics

FORBIDDEN_PACKAGES = ("rasterio", "fiona", "pyogrio", "geopandas", "click", "dask")
# calls that read or write files (builtins, numpy, pathlib, json, os)
FILE_CALLS = {
    "open",
    "load",
    "loadtxt",
    "genfromtxt",
    "fromfile",
    "tofile",
    "save",
    "savez",
    "savez_compressed",
    "savetxt",
    "memmap",
    "read_text",
    "write_text",
    "read_bytes",
    "write_bytes",
    "dump",
    "unlink",
    "mkdir",
    "makedirs",
}
FORBIDDEN_MODULES_FOR_FILES = ("pickle", "shelve", "csv", "shutil", "tempfile", "io")

PHYSICS_DIR = Path(geomelt.physics.__file__).parent
MODULES = sorted(
    ["geomelt.physics"]
    + [f"geomelt.physics.{m.name}" for m in pkgutil.walk_packages([str(PHYSICS_DIR)])]
)


def _source_path(module_name):
    parts = module_name.split(".")[2:]
    if not parts:
        return PHYSICS_DIR / "__init__.py"
    path = PHYSICS_DIR.joinpath(*parts)
    if path.is_dir():
        return path / "__init__.py"
    # a compiled kernel module has a Cython source instead
    return path.with_suffix(".py") if path.with_suffix(".py").exists() else path.with_suffix(".pyx")


# Cython sources are not Python syntax: their imports and calls are found by pattern
# (conservative: a match inside a comment or docstring counts too).
_CYTHON_IMPORT = re.compile(r"^\s*(?:from|import|cimport)\s+([A-Za-z_]\w*)", re.MULTILINE)
_CYTHON_CALL = re.compile(r"\b([A-Za-z_]\w*)\s*\(")


def _imports_and_calls(module_name):
    path = _source_path(module_name)
    text = path.read_text(encoding="utf-8")
    if path.suffix == ".pyx":
        imports = [
            (m.group(1), text.count("\n", 0, m.start()) + 1) for m in _CYTHON_IMPORT.finditer(text)
        ]
        calls = [
            (m.group(1), text.count("\n", 0, m.start()) + 1) for m in _CYTHON_CALL.finditer(text)
        ]
        return imports, calls
    tree = ast.parse(text)
    return list(_top_level_imports(tree)), list(_called_names(tree))


def _top_level_imports(tree):
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                yield alias.name.split(".")[0], node.lineno
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            yield node.module.split(".")[0], node.lineno


def _called_names(tree):
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            func = node.func
            if isinstance(func, ast.Name):
                yield func.id, node.lineno
            elif isinstance(func, ast.Attribute):
                yield func.attr, node.lineno


@pytest.mark.parametrize("module_name", MODULES)
def test_no_forbidden_imports(module_name):
    imports, _ = _imports_and_calls(module_name)
    bad = [
        (name, line)
        for name, line in imports
        if name in FORBIDDEN_PACKAGES + FORBIDDEN_MODULES_FOR_FILES
    ]
    assert not bad, f"{module_name} imports {bad}: physics must stay free of I/O and GIS code"


@pytest.mark.parametrize("module_name", MODULES)
def test_no_file_access(module_name):
    _, calls = _imports_and_calls(module_name)
    bad = [(name, line) for name, line in calls if name in FILE_CALLS]
    assert not bad, f"{module_name} calls {bad}: only geomelt/io opens files"


def test_importing_physics_loads_no_forbidden_package():
    # a fresh interpreter, so packages imported by other tests do not count
    code = (
        "import sys, importlib\n"
        f"for name in {MODULES!r}:\n"
        "    importlib.import_module(name)\n"
        f"print(','.join(p for p in {FORBIDDEN_PACKAGES!r} if p in sys.modules))\n"
    )
    result = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        check=True,
        timeout=120,
        cwd=PHYSICS_DIR.parents[1],  # import this source tree
    )
    assert result.stdout.strip() == "", f"physics import pulled in {result.stdout.strip()}"
