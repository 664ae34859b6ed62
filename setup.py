"""Build of the optional compiled element pass (everything else is in pyproject.toml).

``meshaudit.metrics._fused`` is plain C against the CPython API. It is optional: where no
C compiler works the build goes on without it and meshaudit measures with numpy alone.
No fused multiply-add (``-ffp-contract=off``) and never ``-ffast-math``, so its products
and sums round as numpy's do.
"""

from setuptools import Extension, setup

setup(
    ext_modules=[
        Extension(
            "meshaudit.metrics._fused",
            ["meshaudit/metrics/_fused.c"],
            extra_compile_args=["-O2", "-ffp-contract=off", "-fno-fast-math"],
            optional=True,
        )
    ]
)
