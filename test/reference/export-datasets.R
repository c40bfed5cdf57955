# Exports the two open datasets the engine is checked against, from R's own datasets package,
# into test/reference/data as plain CSV (numeric columns only in the files the engine reads).
#
# Run from the repository root:  Rscript test/reference/export-datasets.R
#
# Sources:
# - faithful: R datasets package, "Old Faithful Geyser Data" (Azzalini & Bowman 1990,
#   Applied Statistics 39, 357-365). 272 rows: eruptions (minutes), waiting (minutes).
# - iris: R datasets package, "Edgar Anderson's Iris Data" (Fisher 1936; Anderson 1935).
#   150 rows: four measurements in cm plus the species.

out <- file.path("test", "reference", "data")
dir.create(out, showWarnings = FALSE, recursive = TRUE)

faithful <- datasets::faithful
write.csv(faithful, file.path(out, "faithful.csv"), row.names = FALSE, quote = FALSE)

iris <- datasets::iris
numeric_columns <- c("Sepal.Length", "Sepal.Width", "Petal.Length", "Petal.Width")
write.csv(iris[, numeric_columns], file.path(out, "iris.csv"), row.names = FALSE, quote = FALSE)
# The species labels go to their own file, row for row, so the engine reads a numeric-only CSV.
write.csv(data.frame(Species = iris$Species), file.path(out, "iris-species.csv"),
          row.names = FALSE, quote = FALSE)

cat(sprintf("faithful: %d rows; iris: %d rows (R %s)\n",
            nrow(faithful), nrow(iris), paste(R.version$major, R.version$minor, sep = ".")))
