//! Integration tests, benchmarks and examples across the lookout crates live in `tests/`, `benches/` and `examples/`.
