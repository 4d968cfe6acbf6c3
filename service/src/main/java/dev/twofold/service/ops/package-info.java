/**
 * The operator's view of a running service: Prometheus metrics at {@code GET /metrics}, the
 * request log with request ids, the retrain history read from the model registry, and the
 * built-in dashboard at {@code GET /dashboard}.
 *
 * <p>{@link dev.twofold.service.ops.Observability} is the one entry point: the HTTP API hands it
 * the Javalin configuration once ({@link dev.twofold.service.ops.Observability#configure}), and
 * whoever swaps models or folds users in tells its {@link dev.twofold.service.ops.ServiceMetrics}.
 * Every metric name is listed in {@code docs/observability.md}.
 */
package dev.twofold.service.ops;
