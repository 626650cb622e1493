//! input stage (to be filled).
