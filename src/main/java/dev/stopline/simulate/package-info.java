/**
 * Rehearsal of a stopping plan before it runs: operating characteristics (type I error, power,
 * futility, units per arm, stopping look), false alarms of guardrails and the sample-ratio check, and
 * the look calendar under a traffic forecast. Pure Java (no Quarkus); the {@code simulate} command is
 * a thin shell over {@link dev.stopline.simulate.Rehearsal}.
 *
 * <p>Three engines, and every figure says which produced it:
 * <ol>
 *   <li>{@link dev.stopline.simulate.ExactEngine}: numerical integration of the group-sequential Z
 *       process at the planned looks (Armitage, McPherson &amp; Rowe 1969; Jennison &amp; Turnbull 2000,
 *       ch. 19).</li>
 *   <li>{@link dev.stopline.simulate.ZScaleEngine}: seeded Monte Carlo of the same process from its
 *       independent score increments (Jennison &amp; Turnbull 2000, sec. 3.1); fast, allocation-free.</li>
 *   <li>{@link dev.stopline.simulate.DataLevelEngine}: seeded Monte Carlo of daily traffic and per-arm
 *       sums, evaluated by the daemon's own {@link dev.stopline.monitor.ExperimentMonitor}.</li>
 * </ol>
 * The first two must agree within 3 Monte Carlo standard errors (asserted in the tests).
 */
package dev.stopline.simulate;
