//! Model files: parsing and validation of the TOML model description.
