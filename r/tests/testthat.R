library(testthat)
library(areal)
test_check("areal")
