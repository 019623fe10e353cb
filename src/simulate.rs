//! Exact surveys of a known design: the test bed for everything else.
