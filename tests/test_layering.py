"""The import contract of the kit's rooms (DEVELOPERS.md, "Rooms and what each may import").

Read from the modules' syntax trees, so it holds whatever the tests import:

- each room imports only the rooms below it (science never imports io,
  products, charts, ui or the command line; computation never imports plotting);
- no import inside a function, except an optional heavy dependency marked
  ``# optional`` on its line;
- no private (underscore) name of one module used by another;
- the physical constants are written once, in ``kit/constants.py``.
"""

import ast
import re
from pathlib import Path

import pytest

KIT = Path(__file__).resolve().parents[1] / "kit"

BASE = {"kit.errors", "kit.constants", "kit.timefmt"}
#: room -> rooms (module prefixes) it may import; "kit" is the package itself (CAUTION)
ALLOWED = {
    "kit.errors": set(),
    "kit.constants": set(),
    "kit.timefmt": set(),
    "kit.model": {"kit"} | BASE,
    "kit.science": {"kit", "kit.model", "kit.science"} | BASE,
    "kit.io": {"kit", "kit.model", "kit.io", "kit.science"} | BASE,
    "kit.pipeline": {"kit", "kit.model", "kit.science"} | BASE,
    "kit.charts": {"kit", "kit.model", "kit.science", "kit.charts"} | BASE,
    "kit.products": {"kit", "kit.model", "kit.science", "kit.io", "kit.charts",
                     "kit.products"} | BASE,
    "kit.ui": {"kit", "kit.model", "kit.science", "kit.io", "kit.charts", "kit.products",
               "kit.pipeline", "kit.ui"} | BASE,
    "kit.cli": {"kit", "kit.model", "kit.science", "kit.io", "kit.charts", "kit.products",
                "kit.pipeline", "kit.cli"} | BASE,
    "kit.__main__": {"kit.cli"},
}
#: the products that assemble a whole shift or rerun may run the pipeline (once per run)
PIPELINE_USERS = {"kit.products.shift", "kit.products.rerun"}
#: names a lower room may take from the package itself
FROM_KIT = {"CAUTION", "__version__"}
#: plotting libraries: only charts, ui (and products that write figures) may import them
PLOTTING = ("matplotlib", "cartopy", "metpy.plots", "ipywidgets")


def modules():
    for path in sorted(KIT.rglob("*.py")):
        rel = path.relative_to(KIT.parent).with_suffix("")
        parts = list(rel.parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        yield ".".join(parts), path


def room_of(mod):
    if mod == "kit":
        return "kit"
    for room in sorted(ALLOWED, key=len, reverse=True):
        if mod == room or mod.startswith(room + "."):
            return room
    raise AssertionError(f"{mod}: in no room of ALLOWED; add it to the contract")


def imports(tree):
    """(node, imported module, names, inside a function) for every import."""
    inner = set()
    for node in ast.walk(tree):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            for sub in ast.walk(node):
                if isinstance(sub, (ast.Import, ast.ImportFrom)):
                    inner.add(id(sub))
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for a in node.names:
                yield node, a.name, [], id(node) in inner
        elif isinstance(node, ast.ImportFrom) and node.level == 0:
            yield node, node.module, [a.name for a in node.names], id(node) in inner


MODULES = list(modules())


@pytest.mark.parametrize("mod,path", MODULES, ids=[m for m, _ in MODULES])
def test_rooms_import_only_the_rooms_below(mod, path):
    if mod == "kit":
        return
    room = room_of(mod)
    tree = ast.parse(path.read_text())
    bad = []
    for node, target, names, _inner in imports(tree):
        if target == "kit":
            extra = set(names) - FROM_KIT
            if extra:
                bad.append(f"line {node.lineno}: from kit import {', '.join(sorted(extra))}")
            continue
        if not target.startswith("kit."):
            if target.startswith(PLOTTING) and room in ("kit.science", "kit.io", "kit.model",
                                                        "kit.pipeline"):
                bad.append(f"line {node.lineno}: {target} (computation never imports plotting)")
            continue
        if target == "kit.pipeline" and room == "kit.products" and mod not in PIPELINE_USERS:
            bad.append(f"line {node.lineno}: {target} (a product takes an Analysis)")
            continue
        if not any(target == a or target.startswith(a + ".") for a in ALLOWED[room]):
            bad.append(f"line {node.lineno}: {target}")
    assert not bad, f"{mod} ({room}) imports what its room may not: " + "; ".join(bad)


@pytest.mark.parametrize("mod,path", MODULES, ids=[m for m, _ in MODULES])
def test_no_imports_inside_functions(mod, path):
    lines = path.read_text().splitlines()
    tree = ast.parse("\n".join(lines))
    bad = []
    for node, target, _names, inner in imports(tree):
        if not inner:
            continue
        marked = any("# optional" in lines[k - 1] for k in range(node.lineno, node.end_lineno + 1))
        if target.startswith("kit") or not marked:
            bad.append(f"line {node.lineno}: {target}")
    assert not bad, (
        f"{mod}: imports inside functions (only an optional heavy dependency, marked "
        "'# optional', may be): " + "; ".join(bad)
    )


@pytest.mark.parametrize("mod,path", MODULES, ids=[m for m, _ in MODULES])
def test_no_private_names_across_modules(mod, path):
    tree = ast.parse(path.read_text())
    private = re.compile(r"^_(?!_)")
    kit_aliases = set()
    bad = []
    for node, target, names, _inner in imports(tree):
        if not (target == "kit" or target.startswith("kit.")):
            continue
        for name in names:
            if private.match(name):
                bad.append(f"line {node.lineno}: {name} from {target}")
        if isinstance(node, ast.ImportFrom):
            kit_aliases.update(a.asname or a.name for a in node.names)
        else:
            kit_aliases.update((a.asname or a.name).split(".")[0] for a in node.names)
    for node in ast.walk(tree):
        if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name)
                and node.value.id in kit_aliases and private.match(node.attr)):
            bad.append(f"line {node.lineno}: {node.value.id}.{node.attr}")
    assert not bad, f"{mod}: private names of other modules: " + "; ".join(sorted(set(bad)))


#: the constants written once in kit/constants.py, as they would be copied
CONSTANT_LITERALS = {
    "g0": r"9\.8066",
    "Earth's rotation": r"7\.2921",
    "Earth radius": r"637100|6371\.0|6371229",
    "knot": r"0\.51444|1\.94384|3600\.0 / 1852|1852\.0 / 3600",
}


@pytest.mark.parametrize("mod,path", MODULES, ids=[m for m, _ in MODULES])
def test_constants_written_once(mod, path):
    if mod == "kit.constants":
        return
    code = []
    for line in path.read_text().splitlines():
        text = line.split("#", 1)[0]
        if text.strip():
            code.append(text)
    text = "\n".join(code)
    # docstrings may quote a value; assignments and expressions may not
    tree = ast.parse(path.read_text())
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Constant) and isinstance(node.value, float):
            lit = repr(node.value)
            for what, pat in CONSTANT_LITERALS.items():
                if re.match(pat, lit):
                    found.append(f"line {node.lineno}: {lit} ({what})")
    for what, pat in CONSTANT_LITERALS.items():
        if "/" in pat:
            for m in re.finditer(r"3600\.0 / 1852|1852\.0 / 3600", text):
                found.append(f"{m.group(0)} ({what})")
            break
    assert not found, f"{mod}: constants copied instead of taken from kit.constants: " + \
        "; ".join(sorted(set(found)))


def test_typical_slopes_public_once():
    holders = [mod for mod, path in MODULES
               if re.search(r"^TYPICAL_SLOPE_1_IN\s*=", path.read_text(), re.M)]
    assert holders == ["kit.constants"], holders
