"""workpack: findings on insulated three-phase systems to isolation plans and work packages."""

from workpack.errors import InputError, Problem, WorkpackError

__all__ = ["InputError", "Problem", "WorkpackError", "__version__"]
__version__ = "0.1.0"
