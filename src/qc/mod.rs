//! qc stage (to be filled).
