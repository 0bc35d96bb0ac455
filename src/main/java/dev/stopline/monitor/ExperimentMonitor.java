package dev.stopline.monitor;

import dev.stopline.plan.Boundary;
import dev.stopline.plan.Guardrail;
import dev.stopline.plan.Harm;
import dev.stopline.plan.Method;
import dev.stopline.plan.Plan;
import dev.stopline.plan.Primary;
import dev.stopline.stats.Normal;
import dev.stopline.stats.StatsException;
import dev.stopline.stats.estimate.ArmStatistics;
import dev.stopline.stats.estimate.Comparison;
import dev.stopline.stats.estimate.MetricType;
import dev.stopline.stats.estimate.SampleRatioCheck;
import dev.stopline.stats.groupseq.BoundarySet;
import dev.stopline.stats.groupseq.Boundaries;
import dev.stopline.stats.groupseq.ClassicalShape;
import dev.stopline.stats.groupseq.Design;
import dev.stopline.stats.groupseq.LookBoundary;
import dev.stopline.stats.groupseq.SequentialInference;
import dev.stopline.stats.sprt.GuardrailMixtureSprt;
import dev.stopline.stats.sprt.HarmDirection;
import dev.stopline.stats.sprt.Interval;
import dev.stopline.stats.sprt.MixtureSprt;
import dev.stopline.stats.sprt.SprtDecision;
import dev.stopline.stats.sprt.WaldSprt;
import dev.stopline.wire.ArmCounts;
import dev.stopline.wire.MetricSums;
import dev.stopline.wire.PlanShape;
import dev.stopline.wire.Snapshot;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * Evaluates one experiment's snapshots against its stopping plan. Pure and deterministic: the same
 * state and snapshot always give the same evaluation, which is what lets the daemon, the offline
 * {@code replay} command and the tests share this one piece of code.
 *
 * <p>Rules, per snapshot:
 * <ul>
 *   <li>Sample-ratio mismatch: chi-square test of units per arm against the allocation, at every
 *       snapshot; a mismatch episode alerts once when it begins.</li>
 *   <li>Group-sequential primary: a formal look is taken when the information fraction first reaches
 *       the next planned fraction (several planned fractions passed at once make one look); the
 *       boundary is computed at the fraction actually reached from the history of looks taken
 *       (Lan &amp; DeMets 1983 spending); a fraction of 1 or more is the final look and spends all
 *       remaining alpha. The repeated confidence interval is reported at every look, the stage-wise
 *       adjusted p-value and the median-unbiased estimate when the primary stops, conditional power
 *       while it continues. Futility does not enter the inference (the usual conservative convention
 *       for non-binding futility).</li>
 *   <li>SPRT and mixture-SPRT primaries: every snapshot is a look; the test is truncated at the
 *       plan's maximum size.</li>
 *   <li>Guardrails: one-sided mixture SPRT of harm beyond the margin at every snapshot, for as long as
 *       snapshots arrive (also after the primary has stopped); each guardrail alerts once. A relative
 *       margin is turned into an absolute one with the current control estimate (a plug-in).</li>
 * </ul>
 * The primary and the guardrails compare the one treatment arm with the control arm.
 */
public final class ExperimentMonitor {
    /**
     * Continuously monitored tests (SPRT, mixture SPRT, guardrails) plug in sample variances, which are
     * unreliable on a handful of units: in a seeded simulation of the mixture SPRT (MixtureSprtTest) the
     * type-I error was 0.037 when looks began at 2 units and 0.0125 from 20. We start these tests once
     * both arms have this many units (our choice, with margin).
     */
    public static final long MIN_UNITS_FOR_CONTINUOUS_TESTS = 100;

    private final Plan plan;
    private final int planVersion;
    private final String treatment;
    private final Design design;
    private final BoundarySet planned;
    private final PlanSizing sizing;
    private final SampleRatioCheck sampleRatio;
    private final double[] plannedFractions;
    private final PlanShape shape;

    private ExperimentMonitor(Plan plan, int planVersion) {
        this.plan = plan;
        this.planVersion = planVersion;
        this.treatment = plan.arms().stream().filter(a -> !a.equals(plan.control())).findFirst().orElseThrow();
        Primary p = plan.primary();
        if (p.method() == Method.GROUP_SEQUENTIAL) {
            this.design = designOf(p);
            this.planned = Boundaries.compute(design);
            this.plannedFractions = p.looks().fractions().stream().mapToDouble(Double::doubleValue).toArray();
        } else {
            this.design = null;
            this.planned = null;
            this.plannedFractions = new double[0];
        }
        this.sizing = PlanSizing.of(plan, planned);
        double[] weights = plan.allocation().values().stream().mapToDouble(Double::doubleValue).toArray();
        this.sampleRatio = SampleRatioCheck.withWeights(weights).withThreshold(plan.sampleRatio().alpha());
        this.shape = new PlanShape(plan.arms(), plan.metrics());
    }

    /** A monitor for a validated plan at the given version. */
    public static ExperimentMonitor of(Plan plan, int planVersion) {
        return new ExperimentMonitor(plan, planVersion);
    }

    private ExperimentMonitor(ExperimentMonitor same, int planVersion) {
        this.plan = same.plan;
        this.planVersion = planVersion;
        this.treatment = same.treatment;
        this.design = same.design;
        this.planned = same.planned;
        this.plannedFractions = same.plannedFractions;
        this.sizing = same.sizing;
        this.sampleRatio = same.sampleRatio;
        this.shape = same.shape;
    }

    /**
     * The same monitor for another version of the same plan, without computing the boundaries again
     * (they depend only on the plan; the parts shared are immutable).
     */
    public ExperimentMonitor atVersion(int version) {
        return version == planVersion ? this : new ExperimentMonitor(this, version);
    }

    /** The group-sequential design a plan describes (power from the plan, or 1 - beta, for futility and sizing). */
    public static Design designOf(Primary p) {
        Design d = Design.of(p.alpha(), p.sides())
                .withLooks(p.looks().fractions().stream().mapToDouble(Double::doubleValue).toArray());
        d = p.boundary() != null
                ? d.withClassical(p.boundary() == Boundary.POCOCK ? ClassicalShape.POCOCK : ClassicalShape.OBRIEN_FLEMING)
                : d.withSpending(p.spending());
        if (p.futility() != null) {
            double beta = p.futility().beta();
            d = d.withFutility(p.futility().spending(), beta, Boolean.TRUE.equals(p.futility().binding()))
                    .withPower(p.power() != null ? p.power() : 1 - beta);
        } else if (p.power() != null) {
            d = d.withPower(p.power());
        }
        return d;
    }

    public Plan plan() {
        return plan;
    }

    public int planVersion() {
        return planVersion;
    }

    /** The arms and metrics every snapshot of this experiment must carry. */
    public PlanShape shape() {
        return shape;
    }

    /** The planned boundaries (group-sequential primaries), or null. */
    public BoundarySet plannedBoundaries() {
        return planned;
    }

    public PlanSizing sizing() {
        return sizing;
    }

    public MonitorState initialState() {
        return MonitorState.initial(plan.experiment(), planVersion);
    }

    /** Evaluates an accepted snapshot (already checked for order, shape and monotonicity). */
    public Evaluation evaluate(MonitorState state, Snapshot snapshot) {
        List<LookRecord> looks = new ArrayList<>();
        List<Alert> alerts = new ArrayList<>();
        ArmCounts c = snapshot.arms().get(plan.control());
        ArmCounts t = snapshot.arms().get(treatment);
        double fraction = sizing.informationFraction(c.units(), t.units());

        SampleRatioRecord srm = checkSampleRatio(snapshot);
        boolean mismatch = srm.mismatch();
        int episodes = state.sampleRatioEpisodes();
        if (mismatch && !state.sampleRatioMismatch()) {
            episodes++;
            alerts.add(new Alert(Alert.idOf(plan.experiment(), AlertKind.SAMPLE_RATIO, null, episodes),
                    plan.experiment(), AlertKind.SAMPLE_RATIO, null, episodes, snapshot.sequence(),
                    snapshot.observedAt(), sampleRatioSummary(srm), null, srm));
        }

        Primary p = plan.primary();
        PrimaryOutcome primary = state.primaryDecision() != null
                ? new PrimaryOutcome(null, state)
                : evaluatePrimary(state, snapshot, c, t, fraction);
        MonitorState next = primary.state();
        if (primary.look() != null) {
            looks.add(primary.look());
            Decision d = primary.look().decision();
            if (d == Decision.EFFICACY || d == Decision.FUTILITY) {
                AlertKind kind = d == Decision.EFFICACY ? AlertKind.EFFICACY : AlertKind.FUTILITY;
                Integer k = primary.look().look();
                alerts.add(new Alert(Alert.idOf(plan.experiment(), kind, p.metric(), k), plan.experiment(), kind,
                        p.metric(), k, snapshot.sequence(), snapshot.observedAt(),
                        primarySummary(primary.look()), primary.look(), null));
            }
        }

        Map<String, MonitorState.MixtureMemo> guards = new HashMap<>(next.guardrails());
        for (Guardrail g : plan.guardrails()) {
            LookRecord look = evaluateGuardrail(g, guards, snapshot, c, t, fraction);
            if (look == null) {
                continue;
            }
            looks.add(look);
            MonitorState.MixtureMemo memo = guards.get(g.metric());
            if (look.decision() == Decision.GUARDRAIL_HARM && !memo.alerted()) {
                guards.put(g.metric(), new MonitorState.MixtureMemo(memo.looks(), memo.pValue(), memo.lower(),
                        memo.upper(), true));
                alerts.add(new Alert(Alert.idOf(plan.experiment(), AlertKind.GUARDRAIL, g.metric(), null),
                        plan.experiment(), AlertKind.GUARDRAIL, g.metric(), null, snapshot.sequence(),
                        snapshot.observedAt(), guardrailSummary(g, look), look, null));
            }
        }

        MonitorState after = new MonitorState(plan.experiment(), planVersion, state.snapshots() + 1, snapshot,
                next.lookFractions(), next.lookZ(), next.lookEfficacyZ(), next.cumulativeAlphaSpent(), next.primaryDecision(),
                next.primaryMixture(), guards, mismatch, episodes);
        return new Evaluation(after, looks, srm, alerts);
    }

    // ------------------------------------------------------------------ sample ratio

    /** The sample-ratio check of a snapshot (also used by the status page for the last snapshot). */
    public SampleRatioRecord checkSampleRatio(Snapshot snapshot) {
        Map<String, Long> units = new LinkedHashMap<>();
        long[] observed = new long[plan.allocation().size()];
        int i = 0;
        long total = 0;
        for (String arm : plan.allocation().keySet()) {
            long n = snapshot.arms().get(arm).units();
            units.put(arm, n);
            observed[i++] = n;
            total += n;
        }
        if (total == 0) {
            return new SampleRatioRecord(snapshot.sequence(), units, 0, 1, sampleRatio.threshold(), false);
        }
        SampleRatioCheck.Result r = sampleRatio.test(observed);
        return new SampleRatioRecord(snapshot.sequence(), units, r.chiSquare(), r.pValue(), sampleRatio.threshold(),
                r.mismatch());
    }

    // ------------------------------------------------------------------ primary

    private record PrimaryOutcome(LookRecord look, MonitorState state) {
    }

    private PrimaryOutcome evaluatePrimary(MonitorState s, Snapshot snap, ArmCounts c, ArmCounts t, double fraction) {
        Primary p = plan.primary();
        if (p.method() == Method.GROUP_SEQUENTIAL && !lookDue(s, fraction)) {
            return new PrimaryOutcome(null, s);      // most snapshots: no estimate needed
        }
        Comparison cmp = compare(p.type(), p.metric(), c, t);
        if (cmp == null || p.method() != Method.GROUP_SEQUENTIAL && !enoughForContinuous(c, t)) {
            return new PrimaryOutcome(null, s);
        }
        switch (p.method()) {
            case GROUP_SEQUENTIAL:
                return groupSequential(s, snap, cmp, fraction);
            case SPRT:
                return wald(s, snap, cmp, fraction);
            case MIXTURE_SPRT:
                return mixture(s, snap, cmp, fraction);
            default:
                throw new IllegalStateException("unknown method " + p.method());
        }
    }

    /** The planned fraction the next formal look waits for. */
    private double nextTarget(MonitorState s) {
        double last = s.lookFractions().isEmpty() ? 0 : s.lookFractions().get(s.lookFractions().size() - 1);
        for (double f : plannedFractions) {
            if (f > last) {
                return f;
            }
        }
        return 1.0;
    }

    /** Whether {@code fraction} reaches the next planned look of a group-sequential plan. */
    private boolean lookDue(MonitorState s, double fraction) {
        return fraction > 0 && fraction >= nextTarget(s);
    }

    private PrimaryOutcome groupSequential(MonitorState s, Snapshot snap, Comparison cmp, double fraction) {
        if (!lookDue(s, fraction)) {
            return new PrimaryOutcome(null, s);
        }
        Primary p = plan.primary();
        int k = s.looksTaken() + 1;
        double[] fractions = new double[k];
        for (int i = 0; i < k - 1; i++) {
            fractions[i] = s.lookFractions().get(i);
        }
        fractions[k - 1] = fraction;
        LookBoundary b = boundaryAt(fractions);
        double z = cmp.z();
        double c = b.efficacyZ();
        boolean twoSided = p.sides() == 2;
        boolean efficacy = twoSided ? Math.abs(z) >= c : z >= c;
        double f = b.futilityZ();
        boolean futility = !efficacy && !Double.isNaN(f) && (twoSided ? Math.abs(z) <= f : z <= f);
        boolean last = fraction >= 1.0;
        Decision decision = efficacy ? Decision.EFFICACY
                : futility ? Decision.FUTILITY
                : last ? Decision.FINAL_NO_DIFFERENCE : Decision.CONTINUE;

        double[] upper = new double[k];
        double[] lower = new double[k];
        for (int i = 0; i < k; i++) {
            upper[i] = i == k - 1 ? c : s.lookEfficacyZ().get(i);
            lower[i] = twoSided ? -upper[i] : Double.NEGATIVE_INFINITY;
        }
        SequentialInference inference = SequentialInference.of(fractions, lower, upper, p.sides());
        SequentialInference.Interval rci = inference.repeatedConfidenceInterval(cmp.difference(), cmp.standardError());
        Double adjusted = null;
        Double mue = null;
        Double cpCurrent = null;
        Double cpDesign = null;
        if (decision != Decision.CONTINUE) {
            adjusted = inference.adjustedPValue(z);
            mue = inference.medianUnbiasedEffect(z, cmp.standardError());
        } else {
            double[] cp = conditionalPower(fraction, z);
            cpCurrent = cp[0];
            cpDesign = Double.isNaN(cp[1]) ? null : cp[1];
        }
        LookRecord look = new LookRecord(plan.experiment(), snap.sequence(), snap.observedAt(), p.metric(),
                LookRecord.PRIMARY, p.method().key(), k, plannedFractions.length, fraction,
                cmp.control().value(), cmp.treatment().value(), cmp.difference(), cmp.standardError(), z,
                cmp.relativeDifference(), c, Double.isNaN(f) ? null : f, b.cumulativeAlphaSpent(),
                nominalP(z, p.sides()), null, rci.lower(), rci.upper(), adjusted, mue, cpCurrent, cpDesign, null,
                decision);
        MonitorState next = new MonitorState(s.experiment(), planVersion, s.snapshots(), s.lastSnapshot(),
                append(s.lookFractions(), fraction), append(s.lookZ(), z), append(s.lookEfficacyZ(), c),
                b.cumulativeAlphaSpent(), decision == Decision.CONTINUE ? null : decision, s.primaryMixture(),
                s.guardrails(), s.sampleRatioMismatch(), s.sampleRatioEpisodes());
        return new PrimaryOutcome(look, next);
    }

    /**
     * The boundary of the look just taken. Spending designs recompute it from the fractions actually
     * reached (Lan &amp; DeMets 1983). A classical Pocock or O'Brien-Fleming boundary is defined only for
     * its planned equally spaced looks, so the look takes the constant of the last planned look reached
     * (the usual practice when looks land close to plan; a plan whose looks drift should use spending).
     */
    private LookBoundary boundaryAt(double[] fractions) {
        if (plan.primary().boundary() == null) {
            return Boundaries.next(planned, fractions);
        }
        double t = fractions[fractions.length - 1];
        int reached = 0;
        while (reached < plannedFractions.length && plannedFractions[reached] <= t + 1e-12) {
            reached++;
        }
        return planned.looks().get(Math.max(0, reached - 1));
    }

    /**
     * Conditional power for the planned looks still ahead, under the current trend and under the design
     * drift; a two-sided test is taken in the direction of the current estimate. The future boundaries
     * are the planned ones: the best forecast of boundaries that will be computed at the fractions
     * actually reached.
     */
    private double[] conditionalPower(double fraction, double z) {
        List<LookBoundary> ahead = new ArrayList<>();
        for (LookBoundary b : planned.looks()) {
            if (b.informationFraction() > fraction) {
                ahead.add(b);
            }
        }
        if (ahead.isEmpty()) {
            return new double[] {Double.NaN, Double.NaN};
        }
        boolean twoSided = plan.primary().sides() == 2;
        double zz = twoSided ? Math.abs(z) : z;
        int m = ahead.size();
        double[] tf = new double[m];
        double[] lo = new double[m];
        double[] up = new double[m];
        for (int i = 0; i < m; i++) {
            tf[i] = ahead.get(i).informationFraction();
            up[i] = ahead.get(i).efficacyZ();
            lo[i] = twoSided ? -up[i] : Double.NEGATIVE_INFINITY;
        }
        double current = SequentialInference.conditionalPower(fraction, zz, tf, lo, up,
                SequentialInference.currentTrendDrift(zz, fraction));
        double drift = planned.drift();
        double byDesign = Double.isNaN(drift) ? Double.NaN
                : SequentialInference.conditionalPower(fraction, zz, tf, lo, up, drift);
        return new double[] {current, byDesign};
    }

    private PrimaryOutcome wald(MonitorState s, Snapshot snap, Comparison cmp, double fraction) {
        Primary p = plan.primary();
        WaldSprt.NormalDifference test = WaldSprt.of(p.alpha(), waldBeta(p)).normalDifference(waldDelta1(p));
        double v = cmp.standardError() * cmp.standardError();
        SprtDecision d = test.decide(cmp.difference(), v);
        Decision decision = d == SprtDecision.ACCEPT_H1 ? Decision.EFFICACY
                : d == SprtDecision.ACCEPT_H0 ? Decision.FUTILITY
                : fraction >= 1 ? Decision.FINAL_NO_DIFFERENCE : Decision.CONTINUE;
        int look = (int) Math.min(Integer.MAX_VALUE, s.snapshots() + 1);
        LookRecord rec = new LookRecord(plan.experiment(), snap.sequence(), snap.observedAt(), p.metric(),
                LookRecord.PRIMARY, p.method().key(), look, null, fraction, cmp.control().value(),
                cmp.treatment().value(), cmp.difference(), cmp.standardError(), cmp.z(), cmp.relativeDifference(),
                null, null, null, nominalP(cmp.z(), p.sides()), null, null, null, null, null, null, null, null,
                decision);
        return new PrimaryOutcome(rec, withPrimary(s, decision, s.primaryMixture()));
    }

    private PrimaryOutcome mixture(MonitorState s, Snapshot snap, Comparison cmp, double fraction) {
        Primary p = plan.primary();
        double tau = p.mixtureSprt().tau();
        MixtureSprt test = MixtureSprt.of(p.alpha(), tau * tau);
        MonitorState.MixtureMemo memo = s.primaryMixture();
        MixtureSprt.State st = memo == null ? test.start()
                : test.resume(memo.looks(), memo.pValue(), new Interval(memo.lower(), memo.upper()));
        double v = cmp.standardError() * cmp.standardError();
        st = st.update(cmp.difference(), v);
        Decision decision = st.rejected() ? Decision.EFFICACY
                : fraction >= 1 ? Decision.FINAL_NO_DIFFERENCE : Decision.CONTINUE;
        MonitorState.MixtureMemo next = new MonitorState.MixtureMemo(st.looks(), st.pValue(), st.interval().lower(),
                st.interval().upper(), decision == Decision.EFFICACY);
        LookRecord rec = new LookRecord(plan.experiment(), snap.sequence(), snap.observedAt(), p.metric(),
                LookRecord.PRIMARY, p.method().key(), (int) Math.min(Integer.MAX_VALUE, st.looks()), null, fraction,
                cmp.control().value(), cmp.treatment().value(), cmp.difference(), cmp.standardError(), cmp.z(),
                cmp.relativeDifference(), null, null, null, nominalP(cmp.z(), p.sides()), st.pValue(),
                finiteOrNull(st.interval().lower()), finiteOrNull(st.interval().upper()), null, null, null, null,
                null, decision);
        return new PrimaryOutcome(rec, withPrimary(s, decision, next));
    }

    /** The alternative of a Wald SPRT primary: {@code sprt.minimumEffect}, else the plan's {@code minimumEffect}; NaN if neither. */
    public static double waldDelta1(Primary p) {
        if (p.sprt() != null && p.sprt().minimumEffect() != null) {
            return p.sprt().minimumEffect();
        }
        return p.minimumEffect() == null ? Double.NaN : p.minimumEffect();
    }

    /** The type II error of a Wald SPRT primary: {@code sprt.beta}, else 1 - power, else 0.2 (80% power: common practice). */
    public static double waldBeta(Primary p) {
        if (p.sprt() != null && p.sprt().beta() != null) {
            return p.sprt().beta();
        }
        return 1 - (p.power() != null ? p.power() : 0.8);
    }

    private MonitorState withPrimary(MonitorState s, Decision decision, MonitorState.MixtureMemo mixture) {
        return new MonitorState(s.experiment(), planVersion, s.snapshots(), s.lastSnapshot(), s.lookFractions(),
                s.lookZ(), s.lookEfficacyZ(), s.cumulativeAlphaSpent(), decision == Decision.CONTINUE ? null : decision, mixture,
                s.guardrails(), s.sampleRatioMismatch(), s.sampleRatioEpisodes());
    }

    // ------------------------------------------------------------------ guardrails

    private LookRecord evaluateGuardrail(Guardrail g, Map<String, MonitorState.MixtureMemo> memos, Snapshot snap,
                                         ArmCounts c, ArmCounts t, double fraction) {
        Comparison cmp = compare(g.type(), g.metric(), c, t);
        if (cmp == null || !enoughForContinuous(c, t)) {
            return null;
        }
        double scale = Boolean.TRUE.equals(g.relative()) ? Math.abs(cmp.control().value()) : 1.0;
        double margin = g.margin() * scale;
        double tau = g.mixingSd() * scale;
        if (!(tau > 0)) {
            return null;
        }
        HarmDirection dir = g.harmful() == Harm.INCREASE ? HarmDirection.INCREASE : HarmDirection.DECREASE;
        GuardrailMixtureSprt test = GuardrailMixtureSprt.of(g.alpha(), tau * tau, dir, margin);
        MonitorState.MixtureMemo memo = memos.get(g.metric());
        GuardrailMixtureSprt.State st = memo == null ? test.start()
                : test.resume(memo.looks(), memo.pValue(), memo.lower());
        double v = cmp.standardError() * cmp.standardError();
        st = st.update(cmp.difference(), v);
        boolean alerted = memo != null && memo.alerted();
        memos.put(g.metric(), new MonitorState.MixtureMemo(st.looks(), st.pValue(), st.harmLowerBound(),
                Double.POSITIVE_INFINITY, alerted));
        Decision decision = st.harmShown() ? Decision.GUARDRAIL_HARM : Decision.CONTINUE;
        return new LookRecord(plan.experiment(), snap.sequence(), snap.observedAt(), g.metric(), LookRecord.GUARDRAIL,
                Method.MIXTURE_SPRT.key(), null, null, fraction, cmp.control().value(), cmp.treatment().value(),
                cmp.difference(), cmp.standardError(), cmp.z(), cmp.relativeDifference(), null, null, null,
                nominalP(cmp.z(), 2), st.pValue(), finiteOrNull(st.harmLowerBound()), null, null, null, null, null,
                margin, decision);
    }

    // ------------------------------------------------------------------ helpers

    private static boolean enoughForContinuous(ArmCounts c, ArmCounts t) {
        return c.units() >= MIN_UNITS_FOR_CONTINUOUS_TESTS && t.units() >= MIN_UNITS_FOR_CONTINUOUS_TESTS;
    }

    /** The comparison of a metric, or null while it cannot be tested yet (an arm empty or constant so far). */
    private static Comparison compare(dev.stopline.plan.MetricType type, String metric, ArmCounts c, ArmCounts t) {
        try {
            return Comparison.of(estimateType(type), statistics(c, metric), statistics(t, metric),
                    Comparison.DEFAULT_CONFIDENCE_LEVEL);
        } catch (StatsException notYet) {
            return null;
        }
    }

    static ArmStatistics statistics(ArmCounts arm, String metric) {
        MetricSums m = arm.metrics().get(metric);
        if (m.isRatio()) {
            return ArmStatistics.ratio(arm.units(), m.sum(), m.sumOfSquares(), m.ratio().denominatorSum(),
                    m.ratio().denominatorSumOfSquares(), m.ratio().sumOfProducts());
        }
        return ArmStatistics.of(arm.units(), m.sum(), m.sumOfSquares());
    }

    static MetricType estimateType(dev.stopline.plan.MetricType type) {
        switch (type) {
            case PROPORTION:
                return MetricType.PROPORTION;
            case MEAN:
                return MetricType.MEAN;
            case RATIO:
                return MetricType.RATIO;
            default:
                throw new IllegalStateException("unknown metric type " + type);
        }
    }

    private static List<Double> append(List<Double> list, double x) {
        List<Double> out = new ArrayList<>(list.size() + 1);
        out.addAll(list);
        out.add(x);
        return out;
    }

    private static double nominalP(double z, int sides) {
        return sides == 2 ? 2 * Normal.upperTail(Math.abs(z)) : Normal.upperTail(z);
    }

    private static Double finiteOrNull(double x) {
        return Double.isFinite(x) ? x : null;
    }

    private String primarySummary(LookRecord l) {
        String kind = l.decision() == Decision.EFFICACY ? "efficacy" : "futility";
        String what = l.efficacyZ() != null
                ? String.format(Locale.ROOT, "%s boundary crossed at look %d of %d (information %.2f): z = %.3f against "
                        + "efficacy %.3f%s; alpha spent %.4g of %.4g", kind, l.look(), l.plannedLooks(),
                        l.informationFraction(), l.z(), l.efficacyZ(),
                        l.futilityZ() == null ? "" : String.format(Locale.ROOT, " / futility %.3f", l.futilityZ()),
                        l.cumulativeAlphaSpent(), plan.primary().alpha())
                : String.format(Locale.ROOT, "%s reached at snapshot %d (information %.2f): z = %.3f%s", kind,
                        l.sequence(), l.informationFraction(), l.z(), l.alwaysValidPValue() == null ? ""
                                : String.format(Locale.ROOT, ", always-valid p = %.4g", l.alwaysValidPValue()));
        String effect = String.format(Locale.ROOT, "; %s difference %+.4g (%+.1f%%)", l.metric(), l.estimate(),
                100 * l.relativeDifference());
        String interval = l.intervalLower() == null || l.intervalUpper() == null ? ""
                : String.format(Locale.ROOT, ", interval valid under repeated looks [%.4g, %.4g]", l.intervalLower(),
                        l.intervalUpper());
        String adjusted = l.adjustedPValue() == null ? ""
                : String.format(Locale.ROOT, "; stage-wise adjusted p = %.4g", l.adjustedPValue());
        return plan.experiment() + ": " + what + effect + interval + adjusted;
    }

    private String guardrailSummary(Guardrail g, LookRecord l) {
        return String.format(Locale.ROOT, "%s: guardrail %s shows harm beyond its margin: difference %+.4g (%+.1f%%), "
                        + "margin %.4g (%s), always-valid p = %.4g below alpha %.4g", plan.experiment(), g.metric(),
                l.estimate(), 100 * l.relativeDifference(), l.margin(), g.harmful().key(), l.alwaysValidPValue(),
                g.alpha());
    }

    private String sampleRatioSummary(SampleRatioRecord r) {
        return String.format(Locale.ROOT, "%s: sample-ratio mismatch: units %s against allocation %s, chi-square %.2f, "
                + "p = %.3g below %.3g; check assignment before trusting any result", plan.experiment(), r.units(),
                plan.allocation(), r.chiSquare(), r.pValue(), r.threshold());
    }
}
