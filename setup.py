"""Build hook: ship the top-level ``environments/`` folder inside the package.

The bundled site files live at the top of the repository, where users look for them; the
installed package needs them too (``aculink demo`` runs on one), so the build copies them into
``aculink/data/environments``. Everything else is configured in pyproject.toml.
"""

import pathlib
import shutil

from setuptools import setup
from setuptools.command.build_py import build_py


class BuildPyWithEnvironments(build_py):
    def run(self):
        super().run()
        source = pathlib.Path(__file__).resolve().parent / "environments"
        target = pathlib.Path(self.build_lib) / "aculink" / "data" / "environments"
        target.mkdir(parents=True, exist_ok=True)
        for path in sorted(source.glob("*")):
            if path.suffix in (".toml", ".csv"):
                shutil.copy2(path, target / path.name)


setup(cmdclass={"build_py": BuildPyWithEnvironments})
