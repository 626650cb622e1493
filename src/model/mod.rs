//! model stage (to be filled).
