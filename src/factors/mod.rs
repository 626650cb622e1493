//! factors stage (to be filled).
