"""The numeric time-domain solver, phasor extraction, KCL residuals.

Independent of the symbolic path: the equations are stamped numerically here from
the parsed circuit, reduced to state equations, and integrated with the matrix
exponential (see :mod:`handcheck.simulate.run`).
"""

from handcheck.simulate.analysis import KclResidual, PhasorFit, Settling, fit_phasors, kcl_residual, settling
from handcheck.simulate.assemble import Equations, assemble
from handcheck.simulate.run import Simulation, simulate
from handcheck.simulate.statemodel import StateModel, state_model

__all__ = [
    "Equations",
    "KclResidual",
    "PhasorFit",
    "Settling",
    "Simulation",
    "StateModel",
    "assemble",
    "fit_phasors",
    "kcl_residual",
    "settling",
    "simulate",
    "state_model",
]
