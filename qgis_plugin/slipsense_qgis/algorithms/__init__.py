"""The processing algorithms, one module each; the provider registers ``ALGORITHMS``."""
from .crosssection import CrossSectionAlgorithm
from .faultslip import FaultSlipAlgorithm
from .mapslip import MapSlipAlgorithm
from .netslip import NetSlipAlgorithm
from .outcroptraces import OutcropTracesAlgorithm
from .planedepths import PlaneDepthsAlgorithm
from .pointplanes import PointPlanesAlgorithm
from .sliptendency import SlipTendencyAlgorithm
from .stressinversion import StressInversionAlgorithm
from .structurecontours import StructureContoursAlgorithm
from .traceplanes import TracePlanesAlgorithm

ALGORITHMS = (
    TracePlanesAlgorithm,
    PointPlanesAlgorithm,
    StructureContoursAlgorithm,
    OutcropTracesAlgorithm,
    PlaneDepthsAlgorithm,
    FaultSlipAlgorithm,
    NetSlipAlgorithm,
    MapSlipAlgorithm,
    StressInversionAlgorithm,
    SlipTendencyAlgorithm,
    CrossSectionAlgorithm,
)

__all__ = ["ALGORITHMS"] + [a.__name__ for a in ALGORITHMS]
