"""Plant simulation for closed-loop and hardware-in-the-loop tests (docs/sim.md).

    track(robot, path, feedforward=True, plant=None, mismatch=0.0, rate_hz=1000, ...)
        offline closed loop (PD with or without inverse-dynamics feedforward) -> TrackRun
    compare(robot, path, ...)   PD alone and PD + feedforward: (run_pd, run_ff, ratio)
    Plant(robot, dt, ...)       the simulated arm (C core through ffwd._plant, or numpy)
    run_loop(robot, path, ...)  the fixed-rate C loop runner ffwd-loop -> its JSON
    PlantClient, start_server   the UDP plant server ffwd-plant-server and its client
    write_model_file(robot, p)  the flat model file the C programs read
    demo_path(robot)            the default pick-and-place reference
"""
from .energy import energy
from .flatmodel import mismatched, read_model_file, write_model_file
from .loop import find_program, run_loop, write_loop_trajectory
from .plant import Plant
from .reference import Reference, as_reference, demo_path, quintic_moves
from .track import TrackRun, compare, default_gains, track
from .udp import PlantClient, start_server

__all__ = ["track", "compare", "TrackRun", "default_gains", "Plant", "run_loop", "find_program",
           "write_loop_trajectory", "PlantClient", "start_server", "write_model_file",
           "read_model_file", "mismatched", "Reference", "as_reference", "demo_path",
           "quintic_moves", "energy"]

