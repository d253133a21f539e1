"""Build hook: ship the example budgets, the workbooks and the docs inside the package.

The files stay where people find them in the repository (``examples/``, ``workbooks/``,
``docs/``); a regular (non-editable) build copies them into ``viscometry/_files/`` of the
wheel, so an installed ``viscometry demo`` and ``viscometry workspace DEST`` find them
(``viscometry.workspace.bundled``). Everything else is configured in pyproject.toml.
"""

import shutil
from pathlib import Path

from setuptools import setup
from setuptools.command.build_py import build_py

#: Folder of the repository → file patterns shipped from it. The same as
#: viscometry.workspace.SHIPPED_FILES (tests/test_workspace.py compares them); hidden files and
#: folders (Jupyter's .ipynb_checkpoints) are never shipped.
SHIPPED = {
    "examples": ("**/*.toml", "**/*.csv"),
    "workbooks": ("*.ipynb", "sanitize.cfg"),
    "docs": ("*.md",),
}


class BuildWithFiles(build_py):
    def run(self):
        super().run()
        if getattr(self, "editable_mode", False):
            return  # an editable install reads the repository's own folders
        root = Path(__file__).resolve().parent
        target = Path(self.build_lib) / "viscometry" / "_files"
        shutil.rmtree(target, ignore_errors=True)  # no stale file from an earlier build
        for folder, patterns in SHIPPED.items():
            for pattern in patterns:
                for src in sorted((root / folder).glob(pattern)):
                    rel = src.relative_to(root / folder)
                    if not src.is_file() or any(part.startswith(".") for part in rel.parts):
                        continue
                    dest = target / folder / rel
                    dest.parent.mkdir(parents=True, exist_ok=True)
                    shutil.copy2(src, dest)


setup(cmdclass={"build_py": BuildWithFiles})
