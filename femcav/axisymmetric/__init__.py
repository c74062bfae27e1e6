"""Bodies of revolution: a 2D solve on the meridional section per azimuthal order m."""
