# R front end of the areal command-line tool: builds the command line from R arguments,
# runs the installed binary, and reads the outputs back with jsonlite, terra and utils.
# The computation is areal's; nothing here recomputes a figure.

#' The areal binary used by this package.
#'
#' Looked up in this order: `options(areal.binary = "/path/to/areal")`, the environment
#' variable `AREAL_BIN`, then `areal` on the `PATH`.
#' @return The path of the binary; an error naming the three ways to set it if none is found.
areal_binary <- function() {
  bin <- getOption("areal.binary", "")
  if (!nzchar(bin)) bin <- Sys.getenv("AREAL_BIN", "")
  if (!nzchar(bin)) bin <- unname(Sys.which("areal"))
  if (!nzchar(bin) || !file.exists(bin)) {
    stop("areal: the areal binary was not found; install it (cargo install --path . in the ",
         "areal repository) or set options(areal.binary = \"/path/to/areal\") or the ",
         "AREAL_BIN environment variable", call. = FALSE)
  }
  bin
}

# Options to command-line arguments: NULL and FALSE are left out, TRUE is a bare flag.
.areal_args <- function(opts) {
  args <- character()
  for (name in names(opts)) {
    v <- opts[[name]]
    if (is.null(v) || identical(v, FALSE)) next
    flag <- paste0("--", gsub("_", "-", name, fixed = TRUE))
    if (isTRUE(v)) {
      args <- c(args, flag)
    } else {
      if (length(v) != 1 || is.na(v)) {
        stop("areal: option ", name, " must be a single value", call. = FALSE)
      }
      args <- c(args, flag, shQuote(as.character(v)))
    }
  }
  args
}

# Run the binary; stop with areal's own error line (and exit code) on failure.
.areal_run <- function(args) {
  out <- tempfile()
  err <- tempfile()
  on.exit(unlink(c(out, err)))
  status <- system2(areal_binary(), args, stdout = out, stderr = err)
  stdout <- readLines(out, warn = FALSE)
  stderr <- readLines(err, warn = FALSE)
  if (!identical(as.integer(status), 0L)) {
    msg <- grep("^areal: (error|internal error)", stderr, value = TRUE)
    if (length(msg) == 0) msg <- stderr
    stop(paste(c(msg, sprintf("(exit code %s)", status)), collapse = " "), call. = FALSE)
  }
  warns <- sub("^areal: warning: ", "", grep("^areal: warning: ", stderr, value = TRUE))
  for (w in warns) warning(w, call. = FALSE)
  stdout
}

#' Run `areal range` and read its outputs.
#'
#' Arguments are the options of `areal range` with `_` for `-` (`buffer_km` is
#' `--buffer-km`). Give exactly one of `omission` (E, percent, chosen before looking at the
#' results) and `threshold`. `vector_crs = TRUE` is `--vector-crs` without a value.
#' @return A list: `summary` (summary.json as a list), `classes` (SpatRaster with levels and
#'   colours), `patches` and `records` (data frames), `out` and `files` (the paths written).
areal_range <- function(suitability, records, out, omission = NULL, threshold = NULL,
                        accessible = NULL, buffer_km = NULL, hull_buffer_km = NULL,
                        connectivity = NULL, keep_duplicates = FALSE, lon_col = NULL,
                        lat_col = NULL, records_crs = NULL, records_layer = NULL,
                        overwrite = FALSE, vectors = FALSE, vector_crs = NULL,
                        simplify_m = NULL, aoo_cell_km = NULL, min_patch_km2 = NULL,
                        gap_km = NULL, keep_dropped = FALSE, no_metrics = FALSE) {
  opts <- list(suitability = suitability, records = records, out = out,
               omission = omission, threshold = threshold, accessible = accessible,
               buffer_km = buffer_km, hull_buffer_km = hull_buffer_km,
               connectivity = connectivity, keep_duplicates = keep_duplicates,
               lon_col = lon_col, lat_col = lat_col, records_crs = records_crs,
               records_layer = records_layer, overwrite = overwrite, vectors = vectors,
               vector_crs = vector_crs, simplify_m = simplify_m, aoo_cell_km = aoo_cell_km,
               min_patch_km2 = min_patch_km2, gap_km = gap_km,
               keep_dropped = keep_dropped, no_metrics = no_metrics, quiet = TRUE)
  .areal_run(c("range", .areal_args(opts)))
  areal_read_run(out)
}

#' Read the folder of an `areal range` run.
#' @param out The run's output folder.
#' @return As [areal_range()].
areal_read_run <- function(out) {
  f <- function(name) file.path(out, name)
  if (!file.exists(f("summary.json"))) {
    stop("areal: ", f("summary.json"), " not found; give the folder of an areal range run",
         call. = FALSE)
  }
  list(
    summary = jsonlite::read_json(f("summary.json"), simplifyVector = TRUE),
    classes = areal_classes(f("classes.tif")),
    patches = read.csv(f("patches.csv"), stringsAsFactors = FALSE),
    records = read.csv(f("records.csv"), stringsAsFactors = FALSE,
                       colClasses = c(origin = "character", id = "character")),
    out = out,
    files = list.files(out, full.names = TRUE)
  )
}

# The classes of classes.tif: value, name, colour (areal's palette; the file carries the
# same, in its colour table, category names and raster attribute table).
.areal_class_table <- data.frame(
  value = 0:2,
  class = c("below threshold", "suitable, accessible (in M)", "suitable, beyond M"),
  col = c("#DDDDDD", "#009E73", "#E69F00"),
  stringsAsFactors = FALSE
)

#' Open a classes.tif as a categorical SpatRaster.
#'
#' terra reads the levels and colours from the file and its `.aux.xml` sidecar; when the
#' sidecar was lost, the levels are set from areal's class table, and the colour table is
#' cut to the three classes.
areal_classes <- function(path) {
  r <- terra::rast(path)
  if (!terra::is.factor(r)) {
    levels(r) <- .areal_class_table[, c("value", "class")]
  }
  terra::coltab(r) <- data.frame(value = .areal_class_table$value,
                                 col = .areal_class_table$col)
  r
}

#' Run `areal extent --json`: EOO and AOO of records, with an earlier run's classes.tif as
#' `range` for the modelled-range figures.
#' @return The figures as a list (the keys of summary.json's `metrics`, plus the run's
#'   version, records file and warnings).
areal_extent <- function(records, range = NULL, connectivity = NULL, aoo_cell_km = NULL,
                         min_patch_km2 = NULL, gap_km = NULL, keep_dropped = FALSE,
                         lon_col = NULL, lat_col = NULL, records_crs = NULL,
                         records_layer = NULL) {
  opts <- list(records = records, range = range, connectivity = connectivity,
               aoo_cell_km = aoo_cell_km, min_patch_km2 = min_patch_km2, gap_km = gap_km,
               keep_dropped = keep_dropped, lon_col = lon_col, lat_col = lat_col,
               records_crs = records_crs, records_layer = records_layer, json = TRUE)
  out <- .areal_run(c("extent", .areal_args(opts)))
  jsonlite::fromJSON(paste(out, collapse = "\n"), simplifyVector = TRUE)
}
