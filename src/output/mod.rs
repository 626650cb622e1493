//! output stage (to be filled).
