//! Reading survey files (CSV of our own design). See the README for the format.
