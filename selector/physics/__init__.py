"""Pure vectorised numerics: element models, the parts table, the circuit solve, corners,
metrics, Monte Carlo and fitting. Never touches the database, prints or renders."""
