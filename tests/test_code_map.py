"""docs/code-map.md lists every module of the package (a reader's way in stays true)."""

from __future__ import annotations

from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_every_module_is_on_the_code_map():
    text = (ROOT / "docs" / "code-map.md").read_text(encoding="utf-8")
    package = ROOT / "fitkit"
    missing = []
    for path in sorted(package.rglob("*.py")):
        rel = path.relative_to(package)
        if path.name == "__init__.py" or path.name == "__main__.py":
            continue
        top = rel.parts[0]
        # a subpackage's modules are named by file name in its row
        name = f"`{rel.name}`" if len(rel.parts) > 1 else f"`{top}`"
        if len(rel.parts) > 1 and f"`{top}/`" not in text:
            missing.append(f"{top}/")
        if name not in text:
            missing.append(str(rel))
    assert not missing, f"add to docs/code-map.md: {missing}"
