/**
 * Stopping plans: the immutable model ({@link dev.stopline.plan.Plan} and its parts), a safe
 * YAML/JSON reader ({@link dev.stopline.plan.PlanParser}), the rules
 * ({@link dev.stopline.plan.PlanValidator}, every problem at once as
 * {@link dev.stopline.plan.PlanProblem}s inside a {@link dev.stopline.plan.PlanException}) and the
 * canonical form with its SHA-256 ({@link dev.stopline.plan.PlanCanonical}). Framework free: only
 * Jackson (core, databind tree model, YAML) is used, so the daemon, the REST API and the offline
 * commands share this code.
 *
 * <p>A plan file, annotated (the shipped examples are in {@code config/plans/}):
 * <pre>
 * experiment: checkout-redesign            # [a-z0-9][a-z0-9._-]{0,127}; the Kafka key of its snapshots
 * allocation: {control: 0.5, treatment: 0.5}   # weights &gt; 0, summing to 1
 * control: control                         # an arm of allocation
 * primary:
 *   metric: orders
 *   type: proportion                       # proportion | mean | ratio
 *   method: group-sequential               # group-sequential | sprt | mixture-sprt
 *   alpha: 0.05
 *   sides: 2                               # 1 or 2, default 2
 *   spending: obrien-fleming               # or boundary: pocock | obrien-fleming (equally spaced looks only)
 *   looks: [0.2, 0.4, 0.6, 0.8, 1.0]       # or an integer K: K equally spaced looks
 *   maxUnitsPerArm: 60000                  # or power + minimumEffect + baseline (baselineRate, or baselineMean and sd)
 *   baselineRate: 0.10
 *   futility: {spending: "power:2", beta: 0.2, binding: false}   # beta default 0.2, binding default false
 *   sprt: {minimumEffect: 0.01, beta: 0.2}                       # method sprt only
 *   mixtureSprt: {tau: 0.01}                                     # method mixture-sprt only
 * guardrails:
 *   - {metric: page_load_ms, type: mean, harmful: increase, margin: 0.05, relative: true, alpha: 0.01}
 *                                          # relative default false, alpha default 0.01, tau default margin
 * sampleRatio: {alpha: 0.001}              # default 0.001
 * description: free text                   # optional
 * owner: checkout-team@bookshop.example    # optional
 * </pre>
 *
 * <p>References:
 * <ol>
 * <li>Lan, K.K.G. &amp; DeMets, D.L. (1983). Discrete sequential boundaries for clinical trials.
 *     Biometrika 70(3), 659-663.</li>
 * <li>Pocock, S.J. (1977). Group sequential methods in the design and analysis of clinical trials.
 *     Biometrika 64(2), 191-199.</li>
 * <li>O'Brien, P.C. &amp; Fleming, T.R. (1979). A multiple testing procedure for clinical trials.
 *     Biometrics 35(3), 549-556.</li>
 * <li>Hwang, I.K., Shih, W.J. &amp; DeCani, J.S. (1990). Group sequential designs using a family of
 *     type I error probability spending functions. Statistics in Medicine 9(12), 1439-1445.</li>
 * <li>Jennison, C. &amp; Turnbull, B.W. (2000). Group Sequential Methods with Applications to Clinical
 *     Trials. Chapman &amp; Hall/CRC (futility by beta spending, binding and non-binding).</li>
 * <li>Wald, A. (1947). Sequential Analysis. Wiley.</li>
 * <li>Johari, R., Koomen, P., Pekelis, L. &amp; Walsh, D. (2017). Peeking at A/B tests: why it
 *     matters, and what to do about it. Proceedings of KDD 2017, 1517-1525 (mixture SPRT).</li>
 * </ol>
 */
package dev.stopline.plan;
