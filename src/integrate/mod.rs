//! Versines → curvature, heading and plan coordinates, with standard deviations.
