-- Standard deviation of the estimated cardinality (multi-Bernoulli: variance Σ r(1 − r)), for the cardinality strip's band.
ALTER TABLE "frames" ADD COLUMN "cardinality_sd" double precision;
