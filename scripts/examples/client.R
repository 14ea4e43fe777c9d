# Ask bandsaw for a median with bootstrap intervals, from R with jsonlite and curl.
#
# The data are invented: minutes to first reply on a fictional support desk's tickets this
# week. Run a server (`bandsaw serve`), then `Rscript client.R`; BANDSAW_URL says where it is.
library(jsonlite)
library(curl)

url <- Sys.getenv("BANDSAW_URL", "http://127.0.0.1:8080")

minutes <- c(2.9, 5.4, 1.8, 8.3, 4.1, 12.6, 6.2, 3.5, 7.7, 44.0, 5.1, 9.4, 4.6, 2.2, 15.8, 6.9, 3.3, 11.2, 5.6, 8.1,
             27.5, 4.4, 6.5, 2.6, 9.9, 5.0, 3.8, 18.3, 7.2, 4.9, 6.0, 33.1, 5.3, 10.4, 3.1, 8.6, 4.2, 14.7, 6.7, 61.0)

# POST a JSON text; return the HTTP status and the parsed answer (errors are JSON too).
post <- function(path, json) {
  h <- new_handle(postfields = json)
  handle_setheaders(h, "Content-Type" = "application/json")
  res <- curl_fetch_memory(paste0(url, path), handle = h)
  list(status = res$status_code, body = fromJSON(rawToChar(res$content)))
}

# 1. A good request: the median, percentile and BCa intervals at 90 % and 95 %, a fixed seed
#    (the same seed gives the same numbers on every run).
request <- list(data = minutes, statistic = "median", methods = c("percentile", "bca"),
                levels = c(0.9, 0.95), resamples = 4000, seed = 2024)

# jsonlite writes a length-one vector as a bare value with auto_unbox = TRUE ("median") and as
# a one-element array by default (["median"]); bandsaw takes either. digits = NA keeps every
# digit of the data (the default rounds to 4).
unboxed <- post("/v1/interval", toJSON(request, auto_unbox = TRUE, digits = NA))
boxed <- post("/v1/interval", toJSON(request, digits = NA))
stopifnot(unboxed$status == 200, boxed$status == 200)
r <- unboxed$body
stopifnot(identical(r$intervals, boxed$body$intervals))
cat("both writer settings accepted, same intervals\n")

cat(sprintf("median: %.3f minutes (n = %d, seed %d)\n", r$estimate, r$n, r$seed))
iv <- r$intervals  # a data frame: one row per method and level
cat(sprintf("%s %.0f%%: %.3f to %.3f\n", iv$method, iv$level * 100, iv$lower, iv$upper), sep = "")

# A statistic with a parameter is a named list. With auto_unbox off, jsonlite boxes its members
# too ({"name": ["exceedance"], "threshold": [10]}); bandsaw reads those as well. Here: the
# share of tickets that waited more than 10 minutes.
share <- list(data = minutes, statistic = list(name = "exceedance", threshold = 10),
              levels = 0.9, methods = "percentile", resamples = 4000, seed = 2024)
bare <- post("/v1/interval", toJSON(share, auto_unbox = TRUE, digits = NA))
kept <- post("/v1/interval", toJSON(share, digits = NA))
stopifnot(bare$status == 200, kept$status == 200, identical(bare$body$intervals, kept$body$intervals))
s <- bare$body
cat(sprintf("share over 10 minutes: %.3f, 90%% interval %.3f to %.3f (both writer settings)\n",
            s$estimate, s$intervals$lower, s$intervals$upper))

# 2. A bad request: a string among the data and a statistic that does not exist. The server
#    answers 422 with one error per bad field, each with a JSON Pointer into the request.
bad <- post("/v1/interval", '{"data": [3, 5, "twelve", 8], "statistic": "typical"}')
errors <- bad$body$errors  # a data frame: pointer, message (and rule, when one decided)
cat(sprintf("problem at %s: %s\n", errors$pointer, errors$message), sep = "")
ok <- bad$status == 422 && identical(sort(errors$pointer), c("/data/2", "/statistic"))
quit(status = if (ok) 0 else 1)
