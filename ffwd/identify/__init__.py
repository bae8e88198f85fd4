"""Parameter identification: excitation trajectories, log import and filtering, base
parameters, least squares, a physically consistent model, reports (docs/identify.md).

    ident = ffwd.identify.from_log(robot, "log.csv", holdout="log2.csv")
    ident.table(); ident.model; ident.predict(q, qd, qdd)
"""
from .base import BaseParameters, base_parameters, base_parameters_of, standard_names
from .excitation import (FourierTrajectory, design_excitation, random_excitation,
                         write_excitation)
from .logs import prepare, read_log
from .synthetic import synthetic_log, two_link_arm, write_synthetic_log
from .workflow import Identification, Validation, from_log

__all__ = ["from_log", "Identification", "Validation", "base_parameters",
           "base_parameters_of", "BaseParameters", "standard_names", "design_excitation",
           "FourierTrajectory", "random_excitation", "write_excitation", "read_log",
           "prepare", "synthetic_log",
           "write_synthetic_log", "two_link_arm"]
