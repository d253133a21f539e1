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

#: Folder of the repository → file patterns shipped from it.
SHIPPED = {
    "examples": ("**/*.toml",),
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
        for folder, patterns in SHIPPED.items():
            for pattern in patterns:
                for src in sorted((root / folder).glob(pattern)):
                    dest = target / folder / src.relative_to(root / folder)
                    dest.parent.mkdir(parents=True, exist_ok=True)
                    shutil.copy2(src, dest)


setup(cmdclass={"build_py": BuildWithFiles})
