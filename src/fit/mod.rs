//! Element fitting: straights, clothoid transitions and arcs by least squares in versine space.
