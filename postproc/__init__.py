"""shearpost: shear reinforcement of reinforced-concrete frame members to ACI 318-19."""

import os

# The kernels multiply small matrices (combinations x cases) on long arrays; BLAS worker
# threads only spin there and fight the engine's own worker processes. Set before numpy
# loads; an explicit setting in the environment wins.
for _var in ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "OMP_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

__version__ = "0.1.0"
