//! Command-line interface.
