"""Builds the Python module with the project's CMake (python/CMakeLists.txt),
so that `pip install . --no-build-isolation` installs the same module as
`cmake --install`. The version is the project() call's in CMakeLists.txt."""

import pathlib
import re
import shutil
import subprocess
import sys

from setuptools import Extension, setup
from setuptools.command.build_ext import build_ext

ROOT = pathlib.Path(__file__).resolve().parent
VERSION = re.search(r"project\(knotpath VERSION ([0-9.]+)", (ROOT / "CMakeLists.txt").read_text()).group(1)


class CMakeBuild(build_ext):
    """Configures an optimized tree with only the module's parts and builds
    the target knotpath_python, then copies the module where pip expects it."""

    def build_extension(self, ext):
        build = pathlib.Path(self.build_temp).resolve() / "cmake"
        subprocess.run(["cmake", "-S", str(ROOT), "-B", str(build), "-DCMAKE_BUILD_TYPE=Release",
                        "-DKNOTPATH_BUILD_TESTS=OFF", "-DKNOTPATH_BUILD_BENCHMARKS=OFF",
                        "-DKNOTPATH_BUILD_EXAMPLES=OFF", "-DKNOTPATH_BUILD_PYTHON=ON",
                        f"-DPython3_EXECUTABLE={sys.executable}"], check=True)
        subprocess.run(["cmake", "--build", str(build), "--target", "knotpath_python", "-j2"], check=True)
        built = next((build / "python" / "knotpath").glob("_core*.so"))
        target = pathlib.Path(self.get_ext_fullpath(ext.name))
        target.parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(built, target)


setup(version=VERSION, packages=["knotpath"], package_dir={"": "python"},
      ext_modules=[Extension("knotpath._core", sources=[])], cmdclass={"build_ext": CMakeBuild})
