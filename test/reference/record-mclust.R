# Records what Debian's r-cran-mclust computes on open datasets, for the engine's tests:
#
# 1. mclust-combining.json: clustCombi (Baudry, Raftery, Celeux, Lo & Gottardo 2010, JCGS 19(2),
#    332-353) on its published examples (the Baudry_etal_2010_JCGS_examples data shipped with
#    mclust: ex4.1, ex4.2, ex4.3, ex4.4.1, ex4.4.2, Test1D) and on faithful and iris: the mixture
#    posteriors it started from (Mclust's BIC choice, written with 17 significant digits so the
#    tests can start from the very same numbers), the pair merged at each step, the entropy and
#    the MAP classification at every level, clustCombiOptim's number of clusters (piecewise-linear
#    fit of entropy against the number of clusters) and the change point of the same fit against
#    the cumulative count of merged observations (entPlot's "normalized" plot).
# 2. mclust-optima.json: Mclust's log-likelihood and BIC for full (VVV) and spherical (VII)
#    models, G = 1..6, on thyroid, wdbc (columns 3-12, the ten "_mean" features), banknote and
#    diabetes, each with the smallest sum of posteriors over a component, and the BIC-chosen G.
#    Default Mclust settings (hierarchical VVV start on SVD-scaled data, mclust.options()).
#    Also the partitions of mclust's model-based hierarchical agglomeration (hc with its defaults
#    for starting EM: modelName "VVV", use "SVD") cut at G = 2..6 (hclass), on those four and on
#    faithful and iris as committed in test/reference/data.
# 3. The numeric columns of those four datasets as CSV under test/reference/data.
#
# Run from the repository root:  Rscript test/reference/record-mclust.R

suppressPackageStartupMessages(library(mclust))

out <- file.path("test", "reference")
dir.create(file.path(out, "data"), showWarnings = FALSE, recursive = TRUE)

# --- a small JSON writer (jsonlite is not in Debian's base R) ------------------------------
num <- function(x) ifelse(is.na(x), "null", sprintf("%.17g", x))
int <- function(x) sprintf("%d", as.integer(x))
arr <- function(items) paste0("[", paste(items, collapse = ","), "]")
obj <- function(...) {
  fields <- list(...)
  paste0("{", paste(sprintf("\"%s\":%s", names(fields), unlist(fields)), collapse = ","), "}")
}
str <- function(x) sprintf("\"%s\"", x)
matrix_rows <- function(m) arr(apply(m, 1, function(row) arr(num(row))))

header <- function() {
  list(
    mclustVersion = str(as.character(packageVersion("mclust"))),
    R = str(paste(R.version$major, R.version$minor, sep = ".")),
    script = str("test/reference/record-mclust.R")
  )
}

# --- 1. combining --------------------------------------------------------------------------
combining_record <- function(name, source, data) {
  result <- clustCombi(data = data)
  z <- result$MclustOutput$z
  G <- result$MclustOutput$G
  entropy <- numeric(G)
  posteriors <- z
  for (K in G:1) {
    posteriors <- t(result$combiM[[K]] %*% t(posteriors))
    entropy[K] <- -sum(mclust:::xlog(posteriors))
  }
  levels <- character(0)
  for (K in G:1) {
    merged <- "null"
    if (K < G) {
      row <- result$combiM[[K]][rowSums(result$combiM[[K]]) == 2, ]
      merged <- arr(int(which(as.logical(row))))
    }
    levels <- c(levels, obj(
      clusters = int(K),
      merged = merged,
      entropy = num(entropy[K]),
      classification = arr(int(result$classification[[K]]))
    ))
  }
  # The cumulative count of merged observations, as entPlot(abc = "normalized") computes it.
  merged_counts <- numeric(0)
  change_merged <- "null"
  change_clusters <- int(clustCombiOptim(result)$numClusters.combi)
  if (G >= 2) {
    posteriors <- z
    for (K in (G - 1):1) {
      posteriors <- t(result$combiM[[K + 1]] %*% t(posteriors))
      columns <- which(as.logical(result$combiM[[K]][rowSums(result$combiM[[K]]) == 2, ]))
      merged_counts[K] <- sum(map(posteriors, warn = FALSE) %in% columns)
    }
    if (G >= 3) change_merged <- int(mclust:::pcws2_reg(cumsum(c(0, merged_counts)), entropy)$c)
  }
  obj(
    name = str(name),
    source = str(source),
    model = str(result$MclustOutput$modelName),
    rows = int(nrow(z)),
    components = int(G),
    posteriors = matrix_rows(z),
    levels = arr(levels),
    changePointClusters = change_clusters,
    mergedCounts = arr(int(merged_counts)),
    changePointMergedObservations = change_merged
  )
}

data(Baudry_etal_2010_JCGS_examples)
examples <- c(
  combining_record("ex4.1", "mclust::Baudry_etal_2010_JCGS_examples ex4.1", ex4.1),
  combining_record("ex4.2", "mclust::Baudry_etal_2010_JCGS_examples ex4.2", ex4.2),
  combining_record("ex4.3", "mclust::Baudry_etal_2010_JCGS_examples ex4.3", ex4.3),
  combining_record("ex4.4.1", "mclust::Baudry_etal_2010_JCGS_examples ex4.4.1", ex4.4.1),
  combining_record("ex4.4.2", "mclust::Baudry_etal_2010_JCGS_examples ex4.4.2", ex4.4.2),
  combining_record("Test1D", "mclust::Baudry_etal_2010_JCGS_examples Test1D", Test1D),
  combining_record("faithful", "datasets::faithful", datasets::faithful),
  combining_record("iris", "datasets::iris, the four measurements", datasets::iris[, 1:4])
)
combining <- do.call(obj, c(header(), list(examples = arr(examples))))
writeLines(combining, file.path(out, "mclust-combining.json"))

# --- 2. optima -----------------------------------------------------------------------------
data(thyroid)
data(wdbc)
data(banknote)
data(diabetes)
datasets <- list(
  thyroid = list(x = thyroid[, -1], source = "mclust::thyroid (UCI thyroid gland data, Coomans et al. 1983), the five lab measurements"),
  wdbc = list(x = wdbc[, 3:12], source = "mclust::wdbc (UCI Breast Cancer Wisconsin Diagnostic, Street et al. 1993), columns 3-12: the ten _mean features"),
  banknote = list(x = banknote[, -1], source = "mclust::banknote (Swiss bank notes, Flury & Riedwyl 1988), the six measurements"),
  diabetes = list(x = diabetes[, -1], source = "mclust::diabetes (Reaven & Miller 1979), glucose, insulin, sspg")
)
records <- character(0)
for (name in names(datasets)) {
  x <- datasets[[name]]$x
  write.csv(x, file.path(out, "data", paste0(name, ".csv")), row.names = FALSE, quote = FALSE)
  for (model in c("VVV", "VII")) {
    fits <- character(0)
    best <- NA
    bestBic <- -Inf
    for (G in 1:6) {
      fit <- Mclust(x, G = G, modelNames = model, verbose = FALSE)
      if (is.null(fit)) {
        fits <- c(fits, obj(k = int(G), logLikelihood = "null", mclustBic = "null", smallestComponent = "null"))
        next
      }
      fits <- c(fits, obj(
        k = int(G),
        logLikelihood = num(fit$loglik),
        mclustBic = num(fit$bic),
        smallestComponent = num(min(colSums(fit$z)))
      ))
      if (fit$bic > bestBic) {
        bestBic <- fit$bic
        best <- G
      }
    }
    records <- c(records, obj(
      dataset = str(name),
      source = str(datasets[[name]]$source),
      file = str(paste0("data/", name, ".csv")),
      rows = int(nrow(x)),
      columns = int(ncol(x)),
      model = str(model),
      fits = arr(fits),
      bicChosenK = int(best)
    ))
  }
}
agglomeration <- character(0)
for (name in c("thyroid", "wdbc", "banknote", "diabetes", "faithful", "iris")) {
  file <- paste0("data/", name, ".csv")
  x <- read.csv(file.path(out, file))
  partitions <- hclass(hc(x, modelName = mclust.options("hcModelName"), use = mclust.options("hcUse")), 2:6)
  agglomeration <- c(agglomeration, obj(
    dataset = str(name),
    file = str(file),
    modelName = str(mclust.options("hcModelName")),
    use = str(mclust.options("hcUse")),
    partitions = arr(sapply(1:ncol(partitions), function(j) obj(k = int(j + 1), classification = arr(int(partitions[, j])))))
  ))
}
optima <- do.call(obj, c(header(), list(
  note = str("mclustBic is mclust's 2 log L - p log n (higher is better), the negative of Spendmix's BIC"),
  results = arr(records),
  agglomeration = arr(agglomeration)
)))
writeLines(optima, file.path(out, "mclust-optima.json"))
cat(sprintf("wrote mclust-combining.json (%d examples) and mclust-optima.json (%d records), mclust %s\n",
            length(examples), length(records), as.character(packageVersion("mclust"))))
