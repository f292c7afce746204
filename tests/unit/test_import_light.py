"""`import qhdesign` stays light: no DOLFINx, gmsh, MPI or matplotlib at import time."""

import subprocess
import sys

HEAVY = ("dolfinx", "gmsh", "mpi4py", "matplotlib", "petsc4py", "ufl", "basix")


def test_import_does_not_load_heavy_modules():
    code = (
        "import sys, qhdesign, qhdesign.stack, qhdesign.materials, qhdesign.cli.app; "
        f"print(','.join(m for m in {HEAVY!r} if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "", f"heavy modules imported: {out.stdout}"


def test_public_api_resolves():
    import qhdesign

    assert 5 <= len(qhdesign.__all__) <= 15
    for name in qhdesign.__all__:
        assert getattr(qhdesign, name) is not None
    assert qhdesign.__version__ and qhdesign.__version__[0].isdigit()
