"""Network stage: impedance and admittance from S, reflection figures, circuits, the one coercion."""
