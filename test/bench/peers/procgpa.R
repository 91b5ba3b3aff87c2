# Peer for the build benchmark: R shapes::procGPA (generalised Procrustes
# analysis with scaling, no reflection) on complete configurations.
#
# Usage: Rscript procgpa.R DATA.csv TOL REPEATS OUT_PREFIX
#   DATA.csv: columns sample,cell,x,y,z; rows grouped by sample, cells in the
#             same order within every sample (written by test/bench/cases/build.ts).
#   TOL:      procGPA's tol1 = tol2 (change of its size-normalised objective
#             between iterations; see docs/benchmarks.md for how it is matched
#             to cairn's tolerance).
# Writes OUT_PREFIX-mshape.csv (the mean shape, k x 3) and OUT_PREFIX-times.txt
# (one elapsed time per repeat, milliseconds, measured inside R with
# proc.time(), so R's start-up and package loading are excluded); prints the
# versions on stdout.
args <- commandArgs(trailingOnly = TRUE)
if (length(args) != 4) stop("usage: Rscript procgpa.R DATA.csv TOL REPEATS OUT_PREFIX")
data_file <- args[1]
tol <- as.numeric(args[2])
repeats <- as.integer(args[3])
out_prefix <- args[4]
suppressPackageStartupMessages(library(shapes))

d <- read.csv(data_file, stringsAsFactors = FALSE)
samples <- unique(d$sample)
cells <- unique(d$cell)
k <- length(cells)
n <- length(samples)
if (nrow(d) != k * n) stop("procgpa.R: data must be complete (every sample has every cell)")
m <- as.matrix(d[, c("x", "y", "z")])
x <- array(0, c(k, 3, n))
for (i in seq_len(n)) {
  rows <- ((i - 1) * k + 1):(i * k)
  if (!identical(d$cell[rows], cells)) stop("procgpa.R: cells must be in the same order in every sample")
  x[, , i] <- m[rows, ]
}

times <- numeric(repeats)
fit <- NULL
for (r in seq_len(repeats)) {
  t0 <- proc.time()[["elapsed"]]
  fit <- procGPA(x, scale = TRUE, reflect = FALSE, tol1 = tol, tol2 = tol, distances = FALSE, pcaoutput = FALSE)
  times[r] <- (proc.time()[["elapsed"]] - t0) * 1000
}
mshape <- fit$mshape
colnames(mshape) <- c("x", "y", "z")
write.csv(mshape, paste0(out_prefix, "-mshape.csv"), row.names = FALSE)
writeLines(sprintf("%.3f", times), paste0(out_prefix, "-times.txt"))
cat(sprintf("%s; shapes %s\n", R.version.string, as.character(packageVersion("shapes"))))
