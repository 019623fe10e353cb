//! Putting the plan on the Earth: projections, start point and bearing, control points.
