"""The processing algorithms, one module each; the provider registers ``ALGORITHMS``."""
from .outcroptraces import OutcropTracesAlgorithm
from .planedepths import PlaneDepthsAlgorithm
from .pointplanes import PointPlanesAlgorithm
from .structurecontours import StructureContoursAlgorithm
from .traceplanes import TracePlanesAlgorithm

ALGORITHMS = (
    TracePlanesAlgorithm,
    PointPlanesAlgorithm,
    StructureContoursAlgorithm,
    OutcropTracesAlgorithm,
    PlaneDepthsAlgorithm,
)

__all__ = ["ALGORITHMS"] + [a.__name__ for a in ALGORITHMS]
