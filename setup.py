"""Build hook: the wheel carries the invented demo catalogue as package data.

The catalogue lives once in git, at ``data/demo/kestrel_targets.ecsv`` (beside the script that
generates it); the build copies it to ``hrstage/data/demo/`` inside the wheel so that ``hrstage demo``
works from an installed wheel with no source checkout. Everything else is in ``pyproject.toml``.
"""

from pathlib import Path

from setuptools import setup
from setuptools.command.build_py import build_py

DEMO_SOURCE = Path("data") / "demo" / "kestrel_targets.ecsv"
DEMO_TARGET = Path("hrstage") / "data" / "demo" / "kestrel_targets.ecsv"


class BuildWithDemo(build_py):
    def run(self):
        super().run()
        if self.editable_mode:        # an editable install reads it from the source tree
            return
        src = Path(__file__).resolve().parent / DEMO_SOURCE
        if not src.is_file():
            raise FileNotFoundError(f"{DEMO_SOURCE} is missing: the wheel must carry the demo catalogue")
        dst = Path(self.build_lib) / DEMO_TARGET
        dst.parent.mkdir(parents=True, exist_ok=True)
        self.copy_file(str(src), str(dst))


setup(cmdclass={"build_py": BuildWithDemo})
