#!/usr/bin/env bash
# Runs one of the trainer benchmarks (plain mains in trainer/src/test/java/dev/twofold/trainer/bench).
#   trainer/bench.sh EpochBench            one ALS epoch on 1,000,000 ratings at rank 32, 2 threads, with GFLOP/s
#   trainer/bench.sh SolverRaceBench       each solver's time to reach a validation RMSE
#   trainer/bench.sh AccuracyBench         coupling x solver on the planted demo community
# Builds test classes with a reactor build (never installs), then runs java on the test classpath.
set -euo pipefail
cd "$(dirname "$0")/.."
main="$1"; shift
mvn -B -o -q -pl trainer -am test-compile dependency:build-classpath \
    -Dmdep.outputFile=target/bench-classpath.txt -Dmdep.includeScope=test >/dev/null
cp="trainer/target/test-classes:trainer/target/classes:$(cat trainer/target/bench-classpath.txt)"
exec java -Xms2g -Xmx8g ${JAVA_OPTS:-} -cp "$cp" "dev.twofold.trainer.bench.$main" "$@"
