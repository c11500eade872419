"""Taking the sweep: drive a generator and a digitiser, sample where the information is.

    transport.py     pyvisa (pyvisa-py backend) resources, replies checked, errors named
    profile.py       instrument profiles: TOML command templates, checked on load
    sinefit.py       IEEE Std 1057 / 1241 sine fits: amplitude, phase and their noise
    reading.py       one point: settle, range, measure, re-read a clipped point
    placement.py     where the next points inform most (Fisher information)
    powered.py       the output on only inside a block: ceiling, set-up, switching off
    session.py       the whole sweep: coarse pass, adaptive rounds, saving
    sweep_file.py    the sweep file and the setup file beside it
    bench_model.py   the simulated bench's physics
    simbench.py      the simulated bench's SCPI servers on loopback ports

Needs the optional packages pyvisa and pyvisa-py (``pip install 'fitkit[instruments]'``).
"""
