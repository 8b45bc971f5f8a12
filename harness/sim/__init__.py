"""The simulated test bay: a transformer and its instruments served as SCPI instruments.

``scenario`` (versioned YAML in ``sim_configs/``), ``transformer`` (equivalent circuit, core,
thermal nodes), ``three_phase`` (the three-limb unit, nodal analysis per harmonic) with
``connections`` (star, delta, zigzag, clock number), ``source``, ``analyser``, ``meters``, ``waveform`` (harmonic phasors),
``bay`` (everything on one clock, advanced lazily), ``scpi_tree`` and ``devices`` (the
instrument-side command trees), ``server`` (loopback sockets), ``faults``, ``truth``.
Imports nothing of the product but ``harness.common``.
"""
