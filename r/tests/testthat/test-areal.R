# The R package on the demo: R reads every output with terra, sf and utils and checks it
# against areal's own tables, and the R run against the CLI's run.
# Run from the repository root (scripts/test.sh):
#   AREAL_BIN=target/release/areal Rscript -e 'testthat::test_dir("r/tests/testthat")'
# Reference libraries: terra (GDAL; cellSize and expanse use GeographicLib on the WGS84
# ellipsoid, Karney 2013), sf (GDAL/OGR; s2 for spherical areas).

demo_dir <- Sys.getenv("AREAL_DEMO", "")
if (!nzchar(demo_dir)) {
  demo_dir <- normalizePath(file.path(testthat::test_path(), "..", "..", "..", "demo-data"))
}
demo <- function(name) file.path(demo_dir, name)

run_dir <- file.path(tempdir(), "areal-r-demo")
unlink(run_dir, recursive = TRUE)
run <- areal_range(demo("suitability.tif"), demo("records.csv"), run_dir, omission = 5,
                   accessible = demo("accessible.geojson"), gap_km = 20,
                   min_patch_km2 = 10, vectors = TRUE)
s <- run$summary

test_that("the summary is a typed list", {
  expect_identical(s$inputs$data_type, "Float32")
  expect_type(s$cells$unsuitable, "integer")
  expect_type(s$area_km2$suitable, "double")
  expect_type(s$threshold$binary_input, "logical")
  expect_length(s$inputs$geo_transform, 6)
})

test_that("classes: a categorical SpatRaster whose cells and areas are the summary's", {
  r <- run$classes
  expect_true(terra::is.factor(r))
  # The levels come from the file itself (category names in the sidecar), not from us.
  raw <- terra::rast(file.path(run_dir, "classes.tif"))
  expect_true(terra::is.factor(raw))
  lv <- terra::levels(raw)[[1]]
  expect_equal(lv[[1]], 0:2)
  expect_equal(lv[[2]], c("below threshold", "suitable, accessible (in M)",
                          "suitable, beyond M"))
  ct <- terra::coltab(r)[[1]]
  expect_equal(nrow(ct), 3)
  expect_equal(unlist(ct[ct$value == 1, c("red", "green", "blue")], use.names = FALSE),
               c(0, 158, 115))
  # Cells per class: the raw codes of the factor raster, counted.
  v <- terra::values(raw, mat = FALSE)
  n <- table(factor(v, levels = c(0, 1, 2)))
  expect_equal(as.numeric(n[["0"]]), s$cells$unsuitable)
  expect_equal(as.numeric(n[["1"]]), s$cells$inside_accessible)
  expect_equal(as.numeric(n[["2"]]), s$cells$outside_accessible)
  expect_equal(terra::global(is.na(raw), "sum")[[1]], s$cells$nodata)
  # Class areas from terra::cellSize (ellipsoidal cell areas, GeographicLib) per class.
  plain <- terra::rast(file.path(run_dir, "classes.tif"))
  levels(plain) <- NULL
  a <- terra::zonal(terra::cellSize(plain, unit = "km"), plain, "sum")
  area <- setNames(a[[2]], a[[1]])
  expect_equal(unname(area["0"]), s$area_km2$unsuitable, tolerance = 1e-6)
  expect_equal(unname(area["1"]), s$area_km2$inside_accessible, tolerance = 1e-6)
  expect_equal(unname(area["2"]), s$area_km2$outside_accessible, tolerance = 1e-6)
})

test_that("the class names travel inside the GeoTIFF too", {
  lone <- file.path(tempdir(), "lone")
  dir.create(lone, showWarnings = FALSE)
  file.copy(file.path(run_dir, "classes.tif"), lone, overwrite = TRUE)
  md <- terra::describe(file.path(lone, "classes.tif"))
  expect_true(any(grepl("CLASS_1=suitable, accessible (in M)", md, fixed = TRUE)))
  expect_true(terra::is.factor(areal_classes(file.path(lone, "classes.tif"))))
})

test_that("patches: a data frame with logical reachable and areas adding up", {
  p <- run$patches
  expect_s3_class(p, "data.frame")
  expect_type(p$reachable, "logical")
  expect_type(p$patch_id, "integer")
  expect_type(p$area_km2, "double")
  expect_false(anyNA(p$reachable))
  expect_equal(sum(p$reachable), s$metrics$reach$reachable_patches)
  expect_equal(nrow(subset(p, reachable)), s$metrics$reach$reachable_patches)
  expect_equal(nrow(p), s$patches$inside_accessible + s$patches$outside_accessible)
  expect_equal(sum(p$cells[p$class == 1]), s$cells$inside_accessible)
  expect_equal(sum(p$area_km2[p$class == 2]), s$area_km2$outside_accessible,
               tolerance = 1e-12)
  expect_equal(nrow(run$records), s$records$total)
  expect_equal(sum(run$records$status == "used"), s$metrics$records_used)
})

test_that("vectors: sf reads every layer with the right counts and types", {
  skip_if_not_installed("sf")
  gpkg <- file.path(run_dir, "range.gpkg")
  L <- sf::st_layers(gpkg)
  n <- setNames(L$features, L$name)
  expect_setequal(L$name, c("range", "patches", "unreachable", "accessible", "records"))
  expect_equal(unname(n["patches"]), nrow(run$patches))
  expect_equal(unname(n["unreachable"]), s$patches$outside_accessible)
  expect_equal(unname(n["records"]), s$records$total)
  rec <- sf::st_read(gpkg, "records", quiet = TRUE)
  expect_type(rec$dropped_by_threshold, "logical")
  expect_true(all(sf::st_geometry_type(rec) == "POINT"))
  pg <- sf::st_read(gpkg, "patches", quiet = TRUE)
  expect_true(all(sf::st_geometry_type(pg) %in% c("POLYGON", "MULTIPOLYGON")))
  expect_true(all(sf::st_is_valid(pg)))
  gj <- sf::st_read(file.path(run_dir, "patches.geojson"), quiet = TRUE)
  expect_equal(sf::st_crs(gj)$epsg, 4326L)
  gj <- gj[order(gj$patch_id), ]
  # Ellipsoidal polygon areas with terra::expanse (GeographicLib) after a planar
  # densification to 0.001 degree, so that east-west edges follow their parallels as the
  # cell edges do: within 1e-6 of areal's cell sums (measured: 4e-8).
  dens <- sf::st_set_crs(sf::st_segmentize(sf::st_set_crs(gj, NA), 0.001), 4326)
  ell <- terra::expanse(terra::vect(dens), unit = "km")
  expect_lt(max(abs(ell / gj$area_km2 - 1)), 1e-6)
  # sf's default (s2, a sphere) differs by more: the reason docs/clients.md says which to use.
  old <- sf::sf_use_s2(TRUE)
  sph <- as.numeric(sf::st_area(gj)) / 1e6
  sf::sf_use_s2(old)
  expect_gt(max(abs(sph / gj$area_km2 - 1)), 1e-3)
})

test_that("the R run equals the CLI's run", {
  cli_dir <- file.path(tempdir(), "areal-cli-demo")
  unlink(cli_dir, recursive = TRUE)
  st <- system2(areal_binary(), c("range", "--suitability", demo("suitability.tif"),
                "--records", demo("records.csv"), "--omission", "5", "--accessible",
                demo("accessible.geojson"), "--gap-km", "20", "--min-patch-km2", "10",
                "--vectors", "--quiet", "--out", cli_dir), stdout = FALSE)
  expect_equal(st, 0L)
  # The same run but for the command line that made it (argument order, output folder).
  cli <- jsonlite::read_json(file.path(cli_dir, "summary.json"), simplifyVector = TRUE)
  cli$command_line <- NULL
  r_run <- s
  r_run$command_line <- NULL
  expect_identical(cli, r_run)
  for (f in c("patches.csv", "records.csv")) {
    expect_identical(readLines(file.path(cli_dir, f)), readLines(file.path(run_dir, f)))
  }
  a <- terra::values(terra::rast(file.path(cli_dir, "classes.tif")))
  b <- terra::values(terra::rast(file.path(run_dir, "classes.tif")))
  expect_identical(a, b)
})

test_that("areal_extent returns the record figures of the summary", {
  e <- areal_extent(demo("records.csv"), range = file.path(run_dir, "classes.tif"),
                    gap_km = 20, min_patch_km2 = 10)
  expect_equal(e$aoo_km2, s$metrics$aoo_km2)
  expect_equal(e$modelled$eoo_km2, s$metrics$modelled$eoo_km2)
  e2 <- areal_extent(demo("records.csv"))
  expect_null(e2$modelled)
  expect_gt(e2$eoo_km2, 0)
})

test_that("errors name the file and carry areal's exit code", {
  expect_error(areal_range(demo("nope.tif"), demo("records.csv"),
                           file.path(tempdir(), "x"), omission = 5),
               "nope.tif.*exit code 3")
  expect_error(areal_range(demo("suitability.tif"), demo("records.csv"),
                           file.path(tempdir(), "x"), omission = 120),
               "--omission.*exit code 2")
  old <- options(areal.binary = "/nonexistent/areal")
  on.exit(options(old))
  expect_error(areal_binary(), "not found")
})
