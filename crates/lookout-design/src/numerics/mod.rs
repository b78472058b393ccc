//! Numerical building blocks: discretisation, eigenvalues, observability, pole placement, Riccati equations.
