from workpack.electrical.ground import single_ground
from workpack.electrical.ground_inverse import MeterTolerance, diagnose_ground_batch
__all__ = ["MeterTolerance", "diagnose_ground_batch", "single_ground"]
