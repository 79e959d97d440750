"""Build of the optional compiled neutrality kernel; everything else is in pyproject.toml.

The extension is optional: where no C compiler is at hand the install goes on without it and
freezeout solves charge neutrality with numpy (freezeout.physics.neutrality_kernel).
"""

from setuptools import Extension, setup

setup(
    ext_modules=[
        Extension(
            "freezeout.physics._neutrality_kernel",
            sources=["src/freezeout/physics/_neutrality_kernel.c"],
            extra_compile_args=["-O2"],
            optional=True,
        )
    ]
)
