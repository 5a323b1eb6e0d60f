"""The package's layers, checked on the source: every module imports only from its own
layer or lower ones, the numerical core (physics, spectra, semiclassical, and the
analysis of a run) imports no file, plotting or cluster library, and no module is longer than MAX_LINES.

Imports are read from the syntax tree of every module, including the imports inside
functions (the lazy imports that keep the command line light), so a late import
cannot hide a dependency. The checker is run on planted bad sources too (the null
cases), so a checker that flags nothing fails the suite.
"""

import ast
import re
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "tdse1d"

#: the layers, bottom to top; a module may import from its own layer and the ones below.
#: An entry is a module or a subpackage of tdse1d (its modules all belong to the layer).
LAYERS = (
    ("foundation", ("tdse1d.units", "tdse1d.errors", "tdse1d.registry")),
    ("physics", ("tdse1d.physics",)),
    ("spectra", ("tdse1d.spectra",)),
    ("semiclassical", ("tdse1d.semiclassical",)),
    ("input", ("tdse1d.input",)),
    ("analysis", ("tdse1d.analysis",)),
    # the result file's layout, readers and writers; below run because the checkpoint
    # of a run is written through the same guarded HDF5 file
    ("io", ("tdse1d.io",)),
    ("run", ("tdse1d.runs",)),
    # the library functions of one input (run, find_states, estimate); below scan and
    # validate, which run their points and cases through it
    ("api", ("tdse1d.api.single_run", "tdse1d.api.pair_run")),
    ("scan", ("tdse1d.scans",)),
    ("plots", ("tdse1d.plots",)),
    ("validate", ("tdse1d.validation",)),
    # the rest of the library the commands call (report, plot, export, scan, compare,
    # validate) and the package tdse1d.api that names them all
    ("library", ("tdse1d.api",)),
    ("cli", ("tdse1d.cli",)),
    # the package's own __init__ loads the api lazily; what it holds itself (the
    # version) is imported as foundation (see layer_violations)
    ("package", ("tdse1d",)),
)

#: the numerical core computes on arrays; files, figures, clusters and input parsing
#: belong to the layers above it. The analysis of a run is numerics too: the file it
#: is read from and stored in is handled by tdse1d.io.analysis_file.
CORE = ("tdse1d.physics", "tdse1d.spectra", "tdse1d.semiclassical", "tdse1d.analysis")
CORE_FORBIDDEN = ("h5py", "matplotlib", "dask", "distributed", "tomllib", "tomli", "tomli_w")

#: a module longer than this holds more than one subject (common practice, no source)
MAX_LINES = 500
#: modules allowed to be longer, with the reason (none)
LONG_MODULES: dict[str, str] = {}


def layer_of(module: str) -> int:
    """Index in LAYERS of a dotted module name of the package (the longest match wins)."""
    best, index = -1, None
    for k, (_, members) in enumerate(LAYERS):
        for m in members:
            if (module == m or module.startswith(m + ".")) and len(m) > best:
                best, index = len(m), k
    if index is None:
        raise LookupError(f"{module} is in no layer of LAYERS")
    return index


def imports_of(source: str, module: str, is_package: bool = False) -> list[tuple[int, str]]:
    """(line, imported module) of every import in ``source``, at any depth, with relative
    imports resolved against ``module``. ``from X import name`` yields ``X.name`` for
    imports from the package (the name may be a submodule) and ``X`` otherwise."""
    package = module if is_package else module.rpartition(".")[0]
    found = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                parts = package.split(".")
                base = ".".join(parts[: len(parts) - node.level + 1])
                target = f"{base}.{node.module}" if node.module else base
            else:
                target = node.module
            if target.split(".")[0] == "tdse1d":
                found += [(node.lineno, f"{target}.{a.name}") for a in node.names]
            else:
                found.append((node.lineno, target))
    return found


def _deepest_module(name: str) -> str:
    """The longest prefix of ``name`` that is a module or package of tdse1d on disk
    (``tdse1d.spectra.harmonic.harmonic_spectrum`` -> ``tdse1d.spectra.harmonic``)."""
    parts = name.split(".")
    while len(parts) > 1:
        path = PACKAGE.parent.joinpath(*parts)
        if path.with_suffix(".py").exists() or (path / "__init__.py").exists():
            return ".".join(parts)
        parts.pop()
    return "tdse1d"


def layer_violations(source: str, module: str, is_package: bool = False) -> list[str]:
    """Imports of ``source`` (module ``module``) that break the layer rules."""
    own = layer_of(module)
    bad = []
    core = any(module == c or module.startswith(c + ".") for c in CORE)
    for line, name in imports_of(source, module, is_package):
        if name.split(".")[0] == "tdse1d":
            found = _deepest_module(name)
            # tdse1d.__version__: the package's own attributes are foundation
            target = 0 if found == "tdse1d" else layer_of(found)
            if target > own:
                bad.append(f"{module}:{line} imports {name} ({LAYERS[target][0]} above {LAYERS[own][0]})")
        elif core and name.split(".")[0] in CORE_FORBIDDEN:
            bad.append(f"{module}:{line} imports {name} (the numerical core does no I/O, plotting or cluster work)")
    return bad


def _modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE.parent).with_suffix("")
        parts = list(rel.parts)
        if parts[-1] == "__init__":
            yield path, ".".join(parts[:-1]), True
        elif parts[-1] != "__main__":
            yield path, ".".join(parts), False


def _try_layer(module):
    try:
        return layer_of(module)
    except LookupError:
        return None


def test_every_module_is_in_a_layer():
    assert [m for _, m, _ in _modules() if _try_layer(m) is None] == []
    # the null case: a module outside every layer is noticed
    assert _try_layer("elsewhere.module") is None


def test_no_module_imports_from_a_higher_layer_or_the_core_from_io_libraries():
    bad = []
    for path, module, is_package in _modules():
        bad += layer_violations(path.read_text(), module, is_package)
    assert bad == []


def too_long(lengths: dict[str, int]) -> dict[str, int]:
    """The modules of ``lengths`` (module -> lines) over MAX_LINES and not excepted."""
    return {m: n for m, n in lengths.items() if n > MAX_LINES and m not in LONG_MODULES}


def test_no_module_is_too_long():
    lengths = {module: len(path.read_text().splitlines()) for path, module, _ in _modules()}
    assert too_long(lengths) == {}
    # an exception that is no longer needed is removed from the list
    assert [m for m in LONG_MODULES if lengths.get(m, 0) <= MAX_LINES] == []
    # the null case: a planted long module is caught
    assert too_long({**lengths, "tdse1d.physics.planted": MAX_LINES + 1}) == {"tdse1d.physics.planted": MAX_LINES + 1}


def test_every_package_is_shipped():
    pyproject = (PACKAGE.parent / "pyproject.toml").read_text()
    listed = set(re.findall(r'"(tdse1d(?:\.\w+)*)"', pyproject.split("packages = [", 1)[1].split("]", 1)[0]))
    on_disk = {m for _, m, is_package in _modules() if is_package}
    assert on_disk - listed == set()


# null cases: the checker flags planted bad sources ------------------------------------

@pytest.mark.parametrize("module, source", [
    # physics reaching up into the run layer, at module level and inside a function
    ("tdse1d.physics.grid", "from ..runs.runner import simulate\n"),
    ("tdse1d.physics.grid", "def f():\n    from tdse1d.io import result_file\n"),
    # spectra importing the package api (the facade above everything)
    ("tdse1d.spectra.harmonic", "from .. import api\n"),
    # the scan reaching up into the library functions on result files
    ("tdse1d.scans.worker", "from ..api import results\n"),
    # analysis importing a writer of files
    ("tdse1d.analysis.report", "import tdse1d.io.result_file\n"),
    # the core importing a file library, lazily
    ("tdse1d.semiclassical.estimates", "def f():\n    import h5py\n"),
    ("tdse1d.spectra.cutoff", "from matplotlib import pyplot\n"),
    ("tdse1d.physics.states", "def f():\n    import tomllib\n"),
    ("tdse1d.analysis.run_analysis", "import h5py\n"),
])
def test_the_checker_flags_a_planted_bad_import(module, source):
    assert len(layer_violations(source, module)) == 1


@pytest.mark.parametrize("module, source", [
    ("tdse1d.physics.grid", "from .. import units\nfrom ..registry import registrar\nimport numpy\n"),
    ("tdse1d.scans.worker", "from ..api import single_run as api\n"),
    ("tdse1d.cli.run", "def f():\n    from .. import api\n    from ..io import result_file\n    import h5py\n"),
    ("tdse1d.io.result_file", "import h5py\nfrom ..physics import grid\nfrom .. import __version__\n"),
])
def test_the_checker_passes_allowed_imports(module, source):
    assert layer_violations(source, module) == []


def test_library_functions_are_not_shadowed_by_subpackages():
    """Importing a subpackage binds its name on the parent package: a layer named like a
    library function (``tdse1d.run`` was both) silently replaced the function."""
    import importlib

    import tdse1d

    for name in tdse1d._API:
        assert importlib.util.find_spec(f"tdse1d.{name}") is None, f"tdse1d.{name} is also a subpackage or module"
    importlib.import_module("tdse1d.runs.runner")
    importlib.import_module("tdse1d.scans.plan")
    assert callable(tdse1d.run) and callable(tdse1d.scan) and callable(tdse1d.validate)
