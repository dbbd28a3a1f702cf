"""shearpost: shear reinforcement of reinforced-concrete frame members to ACI 318-19."""

__version__ = "0.1.0"
