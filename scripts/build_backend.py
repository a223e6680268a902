"""The package's build backend: setuptools, and the numeric kernels compiled at install.

pip builds the package with the hooks below (``[build-system]`` in
``pyproject.toml``).  They are setuptools' own, except that building a wheel
or an editable install first runs :func:`interp.prepare` on the tree being
built, so the kernels are compiled into their cache (``interp/_kernels/
__pycache__``) by the installation rather than by the first calls after it.
For that the build environment gets the package's own dependencies besides
setuptools.  numba keys the cache on its own version, the Python version and
the processor, and ignores what does not match: a wheel built on another
machine, or a later upgrade of numba, falls back to compiling on first use.

``INTERP_PREPARE_ON_INSTALL=0`` skips the step (for example when building a
wheel to hand to other machines).  A failure of the step is reported and
does not stop the build: the kernels then compile on first use.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from setuptools import build_meta
from setuptools.build_meta import (  # noqa: F401  (the hooks pip calls, unchanged)
    build_sdist,
    get_requires_for_build_sdist,
    prepare_metadata_for_build_editable,
    prepare_metadata_for_build_wheel,
)

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10: the build requirement tomli
    import tomli as tomllib

#: the step's limit in seconds: a hung compile must not hang the installation.
TIMEOUT = 900
#: what the step runs, in the tree being built.
CODE = (
    "import interp; r = interp.prepare(); "
    "print(f'interp: {r.compiled} kernel specialisations compiled in {r.seconds:.0f} s')"
)


def _dependencies() -> list[str]:
    project = tomllib.loads(Path("pyproject.toml").read_text(encoding="utf-8"))["project"]
    return list(project["dependencies"])


def get_requires_for_build_wheel(config_settings=None) -> list[str]:
    return build_meta.get_requires_for_build_wheel(config_settings) + _dependencies()


def get_requires_for_build_editable(config_settings=None) -> list[str]:
    return build_meta.get_requires_for_build_editable(config_settings) + _dependencies()


def build_wheel(wheel_directory, config_settings=None, metadata_directory=None) -> str:
    compile_kernels(Path.cwd())
    return build_meta.build_wheel(wheel_directory, config_settings, metadata_directory)


def build_editable(wheel_directory, config_settings=None, metadata_directory=None) -> str:
    compile_kernels(Path.cwd())
    return build_meta.build_editable(wheel_directory, config_settings, metadata_directory)


def compile_kernels(root: Path) -> bool:
    """Run :func:`interp.prepare` on the package in ``root`` in a new process;
    whether it ran to the end.  Never raises: a failure is reported in the build's output."""
    if os.environ.get("INTERP_PREPARE_ON_INSTALL", "1") == "0":
        return False
    env = dict(os.environ)
    # pip's build environment reaches its packages through PYTHONPATH: keep them
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(root), env.get("PYTHONPATH")]))
    try:
        done = subprocess.run(
            [sys.executable, "-c", CODE], cwd=root, env=env, timeout=TIMEOUT, check=False
        )
    except (OSError, subprocess.SubprocessError) as exc:
        print(f"interp: kernels not compiled at install ({exc}); they compile on first use")
        return False
    if done.returncode:
        print("interp: kernels not compiled at install (see above); they compile on first use")
        return False
    return True
