# Polygon areas of an areal run's patches.geojson as R measures them, against areal's own
# area_km2 (ellipsoidal cell sums). Used for the figures in docs/clients.md:
#   areal range ... --vectors --out RUN
#   Rscript scripts/measure-client-areas.R RUN
# Needs sf (and lwgeom for sf_use_s2(FALSE)) and terra.
suppressMessages(library(sf))
d <- commandArgs(TRUE)[1]
p <- st_read(file.path(d, "patches.geojson"), quiet = TRUE)
rel <- function(x) {
  r <- x / p$area_km2 - 1
  sprintf("%+.2e .. %+.2e (%+.4f%% .. %+.4f%%)", min(r), max(r), 100 * min(r), 100 * max(r))
}
# Planar densification to 0.001 degree: east-west edges then follow their parallels, as the
# cell edges do (a geodesic between two corners on one parallel bulges poleward).
q <- st_set_crs(st_segmentize(st_set_crs(p, NA), 0.001), 4326)
sf_use_s2(TRUE)
cat("sf default (s2, sphere)                 ", rel(as.numeric(st_area(p)) / 1e6), "\n")
cat("sf default (s2, sphere), densified      ", rel(as.numeric(st_area(q)) / 1e6), "\n")
if (requireNamespace("lwgeom", quietly = TRUE)) {
  sf_use_s2(FALSE)
  cat("sf_use_s2(FALSE) (lwgeom, WGS84)        ", rel(as.numeric(st_area(p)) / 1e6), "\n")
  cat("sf_use_s2(FALSE), densified             ", rel(as.numeric(st_area(q)) / 1e6), "\n")
  sf_use_s2(TRUE)
}
cat("terra::expanse (GeographicLib, WGS84)   ", rel(terra::expanse(terra::vect(p), unit = "km")), "\n")
cat("terra::expanse, densified               ", rel(terra::expanse(terra::vect(q), unit = "km")), "\n")
cat(nrow(p), "patches,", sprintf("%.1f to %.1f km2", min(p$area_km2), max(p$area_km2)), "\n")
