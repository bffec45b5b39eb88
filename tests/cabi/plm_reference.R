# Reference values for the C-interface tests of within, random effects, Hausman,
# unit effects and the within serial check on the Grunfeld panel, computed by R's plm,
# sandwich and lmtest (test oracles). Run once by hand; its output is stored as
# tests/data/panel/grunfeld_within_random_plm.txt and the C tests copy numbers from it.
#   Rscript tests/cabi/plm_reference.R tests/data/panel/grunfeld.csv \
#     > tests/data/panel/grunfeld_within_random_plm.txt
suppressPackageStartupMessages({ library(plm); library(sandwich); library(lmtest) })
args <- commandArgs(trailingOnly = TRUE)
d <- read.csv(args[1])
p <- pdata.frame(d, index = c("firm", "year"))
out <- function(key, value) cat(sprintf("%s %.15g\n", key, value))
cat(sprintf("# R %s, plm %s, sandwich %s, lmtest %s\n", getRversion(), packageVersion("plm"),
            packageVersion("sandwich"), packageVersion("lmtest")))

fe <- plm(inv ~ value + capital, data = p, model = "within")
re <- plm(inv ~ value + capital, data = p, model = "random", random.method = "swar")
po <- plm(inv ~ value + capital, data = p, model = "pooling")

out("within.coef.value", coef(fe)["value"])
out("within.coef.capital", coef(fe)["capital"])
out("within.se.classical.value", sqrt(diag(vcov(fe)))["value"])
out("within.se.classical.capital", sqrt(diag(vcov(fe)))["capital"])
out("within.r2", summary(fe)$r.squared["rsq"])
# CR1 with K = slopes (unit effects nested in the clusters): plm "sss" is that form.
cr1 <- vcovHC(fe, method = "arellano", type = "sss", cluster = "group")
out("within.se.CR1.value", sqrt(diag(cr1))["value"])
out("within.se.CR1.capital", sqrt(diag(cr1))["capital"])

out("random.coef.intercept", coef(re)["(Intercept)"])
out("random.coef.value", coef(re)["value"])
out("random.coef.capital", coef(re)["capital"])
out("random.se.classical.value", sqrt(diag(vcov(re)))["value"])

ft <- pFtest(fe, po)
out("effects.F", ft$statistic)
out("effects.df1", ft$parameter[1])
out("effects.df2", ft$parameter[2])
out("effects.p", ft$p.value)

h <- phtest(fe, re)
out("hausman.statistic", h$statistic)
out("hausman.df", h$parameter)
out("hausman.p", h$p.value)

# Robust (Mundlak) form, written out: quasi-demeaned equation with the unit means of
# the regressors times (1 - theta) added, Wald test of those with CR1 by firm.
theta <- ercomp(re)$theta
if (length(theta) > 1) theta <- theta[as.character(d$firm)]
mean_by <- function(v) ave(v, d$firm)
ys <- d$inv - theta * mean_by(d$inv)
one <- rep(1 - theta, length.out = nrow(d))
vs <- d$value - theta * mean_by(d$value)
cs <- d$capital - theta * mean_by(d$capital)
mv <- one * mean_by(d$value)
mc <- one * mean_by(d$capital)
aux <- lm(ys ~ 0 + one + vs + cs + mv + mc)
V <- vcovCL(aux, cluster = d$firm, type = "HC1", cadjust = TRUE)
b <- coef(aux)[c("mv", "mc")]
W <- as.numeric(t(b) %*% solve(V[c("mv", "mc"), c("mv", "mc")]) %*% b)
G <- length(unique(d$firm))
out("hausman_robust.chi2", W)
out("hausman_robust.chi2_p", pchisq(W, 2, lower.tail = FALSE))
out("hausman_robust.f", W / 2)
out("hausman_robust.f_df2", G - 1)
out("hausman_robust.f_p", pf(W / 2, 2, G - 1, lower.tail = FALSE))

# Within serial check: residual on its lag within firms (adjacent years), and the
# level-error test H0 slope = -1/(T-1) with CR1 (K = 2) by firm, F on (1, G-1).
e <- as.numeric(residuals(fe))
key <- paste(d$firm, d$year)
prev <- match(paste(d$firm, d$year - 1), key)
ok <- !is.na(prev)
ar <- lm(e[ok] ~ e[prev[ok]])
s <- summary(ar)$coefficients
out("within_serial.slope", s[2, 1])
out("within_serial.se", s[2, 2])
out("within_serial.pairs", sum(ok))
Vs <- vcovCL(ar, cluster = d$firm[ok], type = "HC1", cadjust = TRUE)
Tn <- length(unique(d$year))
r0 <- -1 / (Tn - 1)
Fl <- ((s[2, 1] - r0) / sqrt(Vs[2, 2]))^2
out("within_serial.level_null", r0)
out("within_serial.level_se", sqrt(Vs[2, 2]))
out("within_serial.level_f", Fl)
out("within_serial.level_p", pf(Fl, 1, G - 1, lower.tail = FALSE))

# Unit effects of the within fit (ybar_i - xbar_i' b) and the random-effects variance
# components and theta (balanced panel: one theta).
fx <- fixef(fe)
out("within.unit_effect.firm1", fx["1"])
out("within.unit_effect.firm10", fx["10"])
ec <- ercomp(re)
out("random.sigma2_idios", ec$sigma2["idios"])
out("random.sigma2_id", ec$sigma2["id"])
out("random.theta", ec$theta[1])
