"""On the board: single-supply biasing, a trim plan and the parts' physics (dielectric, self-resonance, drift)."""
