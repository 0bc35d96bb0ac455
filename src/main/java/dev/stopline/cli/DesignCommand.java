package dev.stopline.cli;

import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.SerializationFeature;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.stopline.stats.StatsException;
import dev.stopline.stats.groupseq.BoundarySet;
import dev.stopline.stats.groupseq.Boundaries;
import dev.stopline.stats.groupseq.ClassicalShape;
import dev.stopline.stats.groupseq.Design;
import dev.stopline.stats.groupseq.LookBoundary;
import dev.stopline.stats.groupseq.SampleSize;
import java.io.PrintWriter;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.concurrent.Callable;
import java.util.function.Supplier;
import picocli.CommandLine;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * {@code design}: plans a group-sequential test offline, printing per-look efficacy (and futility)
 * boundaries, the alpha spent, the inflation factor and, when an effect is given, the sample size per arm.
 *
 * <p>Every bad option ends in one line on stderr naming the option and the rule, and exit code 2: the
 * command throws {@link ParameterException}, and {@link CliErrors#ONE_LINE} prints just its message
 * ({@link #commandLine()} installs it, as {@code Main} does for every subcommand). Rules broken inside the
 * statistics core ({@link StatsException}) are re-thrown naming the option that carried the value.
 */
@Command(name = "design", mixinStandardHelpOptions = true,
        description = {"Plan a group-sequential test: efficacy/futility boundaries per look, alpha spent,",
            "inflation factor and sample size per arm."})
public final class DesignCommand implements Callable<Integer> {

    static final String NON_BINDING_NOTE = "efficacy boundaries computed as if futility did not exist";
    private static final int MAX_LOOKS = 200;

    @Spec
    CommandSpec spec;

    @Option(names = "--alpha", paramLabel = "A", defaultValue = "0.05",
            description = "Type I error; the two-sided total when --sides 2 (default ${DEFAULT-VALUE}).")
    double alpha;

    @Option(names = "--sides", paramLabel = "1|2", defaultValue = "2",
            description = "1 = one-sided (upper), 2 = two-sided symmetric (default ${DEFAULT-VALUE}).")
    int sides;

    @Option(names = "--looks", paramLabel = "K|t1,...,tK", defaultValue = "5",
            description = "K equally spaced looks, or information fractions increasing to 1 (default ${DEFAULT-VALUE}).")
    String looks;

    @Option(names = "--spending", paramLabel = "SPEC",
            description = "Alpha spending: obrien-fleming | pocock | hwang-shih-decani:GAMMA | power:RHO "
                    + "(default obrien-fleming when --boundary is absent).")
    String spending;

    @Option(names = "--boundary", paramLabel = "pocock|obrien-fleming",
            description = "Classical boundary shape instead of --spending.")
    String boundary;

    @Option(names = "--futility", paramLabel = "SPEC", description = "Beta spending function for futility.")
    String futility;

    @Option(names = "--beta", paramLabel = "B", description = "Total beta spent on futility (needs --futility).")
    Double beta;

    @Option(names = "--binding", description = "Futility is binding (efficacy boundaries account for it).")
    boolean binding;

    @Option(names = "--power", paramLabel = "P", description = "Power for sizing (default 1 - beta with --futility).")
    Double power;

    @Option(names = "--baseline-rate", paramLabel = "p", description = "Control conversion rate (proportions).")
    Double baselineRate;

    @Option(names = "--mean", paramLabel = "m", description = "Control mean (means; needed with --relative-effect).")
    Double mean;

    @Option(names = "--sd", paramLabel = "s", description = "Standard deviation per unit (means).")
    Double sd;

    @Option(names = "--relative-effect", paramLabel = "r", description = "Effect as a relative lift, e.g. 0.1 = +10%%.")
    Double relativeEffect;

    @Option(names = "--absolute-effect", paramLabel = "d", description = "Effect as an absolute difference.")
    Double absoluteEffect;

    @Option(names = "--format", paramLabel = "table|json", defaultValue = "table",
            description = "Output format (default ${DEFAULT-VALUE}).")
    String format;

    /** A command line for this command with one-line error messages. */
    public static CommandLine commandLine() {
        CommandLine cmd = new CommandLine(new DesignCommand());
        cmd.setParameterExceptionHandler(CliErrors.ONE_LINE);
        return cmd;
    }

    @Override
    public Integer call() {
        boolean json = parseFormat();
        Design design = buildDesign();
        BoundarySet plan = core("design", () -> Boundaries.compute(design));
        Sizing sizing = sizing(plan);
        PrintWriter out = spec.commandLine().getOut();
        if (json) {
            out.println(toJson(plan, sizing));
        } else {
            printTable(out, plan, sizing);
        }
        out.flush();
        return 0;
    }

    // ------------------------------------------------------------------ options -> design

    private boolean parseFormat() {
        if ("json".equals(format)) {
            return true;
        }
        if ("table".equals(format)) {
            return false;
        }
        throw bad("--format: must be table or json (got %s)", format);
    }

    private Design buildDesign() {
        if (!(alpha > 0 && alpha < 1)) {
            throw bad("--alpha: must be in (0, 1) (got %s)", alpha);
        }
        if (sides != 1 && sides != 2) {
            throw bad("--sides: must be 1 or 2 (got %d)", sides);
        }
        Design design = core("--alpha", () -> Design.of(alpha, sides));
        design = withLooks(design);
        design = withEfficacy(design);
        design = withFutility(design);
        if (power != null) {
            if (!(power > 0 && power < 1)) {
                throw bad("--power: must be in (0, 1) (got %s)", power);
            }
            Design d = design;
            design = core("--power", () -> d.withPower(power));
        }
        return design;
    }

    private Design withLooks(Design design) {
        String text = looks.trim();
        if (!text.contains(",") && !text.contains(".")) {
            int k;
            try {
                k = Integer.parseInt(text);
            } catch (NumberFormatException e) {
                throw bad("--looks: must be a count K or fractions t1,...,tK (got %s)", looks);
            }
            if (k < 1 || k > MAX_LOOKS) {
                throw bad("--looks: K must be in [1, %d] (got %d)", MAX_LOOKS, k);
            }
            return core("--looks", () -> design.withEqualLooks(k));
        }
        double[] t = parseFractions(text);
        return core("--looks", () -> design.withLooks(t));
    }

    private double[] parseFractions(String text) {
        String[] parts = text.split(",", -1);
        if (parts.length > MAX_LOOKS) {
            throw bad("--looks: at most %d looks (got %d)", MAX_LOOKS, parts.length);
        }
        double[] t = new double[parts.length];
        for (int i = 0; i < parts.length; i++) {
            try {
                t[i] = Double.parseDouble(parts[i].trim());
            } catch (NumberFormatException e) {
                throw bad("--looks: '%s' is not a number (got %s)", parts[i].trim(), text);
            }
            if (!(t[i] > 0 && t[i] <= 1)) {
                throw bad("--looks: fractions must be in (0, 1] (got %s)", text);
            }
            if (i > 0 && !(t[i] > t[i - 1])) {
                throw bad("--looks: fractions must increase strictly and end at 1 (got %s)", text);
            }
        }
        if (t[t.length - 1] != 1.0) {
            throw bad("--looks: fractions must increase strictly and end at 1 (got %s)", text);
        }
        return t;
    }

    private Design withEfficacy(Design design) {
        if (spending != null && boundary != null) {
            throw bad("--spending/--boundary: give exactly one of them (got both)");
        }
        if (boundary != null) {
            ClassicalShape shape = switch (boundary) {
                case "pocock" -> ClassicalShape.POCOCK;
                case "obrien-fleming" -> ClassicalShape.OBRIEN_FLEMING;
                default -> throw bad("--boundary: must be pocock or obrien-fleming (got %s)", boundary);
            };
            return core("--boundary", () -> design.withClassical(shape));
        }
        String s = spending == null ? "obrien-fleming" : spending;
        return core("--spending", () -> design.withSpending(s));
    }

    private Design withFutility(Design design) {
        if (futility == null) {
            if (beta != null || binding) {
                throw bad("%s: needs --futility SPEC", beta != null ? "--beta" : "--binding");
            }
            return design;
        }
        double b;
        if (beta != null) {
            b = beta;
        } else if (power != null) {
            b = 1 - power;
        } else {
            throw bad("--futility: needs --beta B (or --power P, taking beta = 1 - P)");
        }
        if (!(b > 0 && b < 1)) {
            throw bad("--beta: must be in (0, 1) (got %s)", b);
        }
        if (boundary != null) {
            throw bad("--futility: classical --boundary takes no futility; use --spending for beta spending");
        }
        if (power != null && beta != null && Math.abs(power - (1 - beta)) > 1e-12) {
            throw bad("--power: must equal 1 - beta = %s when --futility spends beta (got %s)", 1 - beta, power);
        }
        return core("--futility", () -> design.withFutility(futility, b, binding));
    }

    // ------------------------------------------------------------------ sizing

    /** Sizes per arm; {@code effect == false} when no effect was given (inflation factor only). */
    record Sizing(double inflation, boolean effect, long fixedPerArm, long maxPerArm) {
    }

    private Sizing sizing(BoundarySet plan) {
        boolean proportions = baselineRate != null;
        boolean means = mean != null || sd != null;
        boolean anyEffect = relativeEffect != null || absoluteEffect != null;
        if (proportions && means) {
            throw bad("--baseline-rate: proportions and means (--mean/--sd) cannot be combined");
        }
        if (relativeEffect != null && absoluteEffect != null) {
            throw bad("--relative-effect/--absolute-effect: give exactly one of them (got both)");
        }
        if (anyEffect && !proportions && !means) {
            throw bad("%s: needs --baseline-rate p (proportions) or --sd s (means)",
                    relativeEffect != null ? "--relative-effect" : "--absolute-effect");
        }
        if ((proportions || means) && !anyEffect) {
            throw bad("%s: needs --relative-effect r or --absolute-effect d",
                    proportions ? "--baseline-rate" : (sd != null ? "--sd" : "--mean"));
        }
        double r = plan.inflationFactor();
        if (!anyEffect) {
            return new Sizing(r, false, 0, 0);
        }
        if (Double.isNaN(r)) {
            throw bad("--power: needed for sample size (or --futility with --beta)");
        }
        double p = power != null ? power : 1 - beta;
        SampleSize calc = core("--power", () -> SampleSize.of(alpha, sides, p));
        double fixed = proportions ? proportionsFixed(calc) : meansFixed(calc);
        long max = core("--power", () -> SampleSize.groupSequential(fixed, r));
        return new Sizing(r, true, SampleSize.roundUp(fixed), max);
    }

    private double proportionsFixed(SampleSize calc) {
        double p0 = baselineRate;
        if (!(p0 > 0 && p0 < 1)) {
            throw bad("--baseline-rate: must be in (0, 1) (got %s)", p0);
        }
        double p1 = relativeEffect != null ? p0 * (1 + relativeEffect) : p0 + absoluteEffect;
        String opt = relativeEffect != null ? "--relative-effect" : "--absolute-effect";
        if (!(p1 > 0 && p1 < 1) || p1 == p0) {
            throw bad("%s: treatment rate must be in (0, 1) and differ from the baseline (got %s)", opt, p1);
        }
        return core(opt, () -> calc.proportions(p0, p1).control());
    }

    private double meansFixed(SampleSize calc) {
        if (sd == null) {
            throw bad("--mean: needs --sd s");
        }
        if (!(sd > 0 && sd < Double.POSITIVE_INFINITY)) {
            throw bad("--sd: must be finite and > 0 (got %s)", sd);
        }
        double d;
        String opt;
        if (relativeEffect != null) {
            if (mean == null) {
                throw bad("--relative-effect: needs --mean m for means");
            }
            d = mean * relativeEffect;
            opt = "--relative-effect";
        } else {
            d = absoluteEffect;
            opt = "--absolute-effect";
        }
        if (!(Double.isFinite(d) && d != 0)) {
            throw bad("%s: difference to detect must be finite and non-zero (got %s)", opt, d);
        }
        return core(opt, () -> calc.means(sd, d).control());
    }

    // ------------------------------------------------------------------ output

    String toJson(BoundarySet plan, Sizing sizing) {
        ObjectMapper mapper = new ObjectMapper().enable(SerializationFeature.INDENT_OUTPUT);
        ObjectNode root = mapper.createObjectNode();
        root.put("alpha", alpha);
        root.put("sides", sides);
        ArrayNode arr = root.putArray("looks");
        for (LookBoundary b : plan.looks()) {
            ObjectNode n = arr.addObject();
            n.put("informationFraction", b.informationFraction());
            n.put("efficacyZ", b.efficacyZ());
            if (Double.isNaN(b.futilityZ())) {
                n.putNull("futilityZ");
            } else {
                n.put("futilityZ", b.futilityZ());
            }
            n.put("cumulativeAlphaSpent", b.cumulativeAlphaSpent());
            n.put("nominalPValue", b.nominalPValue());
        }
        if (!Double.isNaN(sizing.inflation())) {
            root.put("inflationFactor", sizing.inflation());
        }
        if (sizing.effect()) {
            root.put("fixedSampleSizePerArm", sizing.fixedPerArm());
            root.put("sampleSizePerArm", sizing.maxPerArm());
        }
        if (plan.nonBindingFutility()) {
            root.put("note", NON_BINDING_NOTE);
        }
        try {
            return mapper.writeValueAsString(root);
        } catch (com.fasterxml.jackson.core.JsonProcessingException e) {
            throw new IllegalStateException("a tree of plain numbers failed to serialise", e);
        }
    }

    void printTable(PrintWriter out, BoundarySet plan, Sizing sizing) {
        out.println(header(plan));
        boolean sized = sizing.effect();
        List<String[]> rows = new ArrayList<>();
        rows.add(sized
                ? new String[] {"look", "fraction", "efficacy z", "futility z", "nominal p", "cum. alpha", "n per arm"}
                : new String[] {"look", "fraction", "efficacy z", "futility z", "nominal p", "cum. alpha"});
        for (LookBoundary b : plan.looks()) {
            String[] row = {
                Integer.toString(b.look()),
                fmt("%.4f", b.informationFraction()),
                fmt("%.4f", b.efficacyZ()),
                Double.isNaN(b.futilityZ()) ? "-" : fmt("%.4f", b.futilityZ()),
                probability(b.nominalPValue()),
                probability(b.cumulativeAlphaSpent()),
                sized ? Long.toString(SampleSize.atFraction(b.informationFraction(), sizing.maxPerArm())) : ""
            };
            rows.add(sized ? row : java.util.Arrays.copyOf(row, 6));
        }
        printAligned(out, rows);
        if (futility != null) {
            out.println(sides == 2 ? "futility: stop for futility when |Z| < futility z (inner region)"
                    : "futility: stop for futility when Z < futility z");
        }
        if (plan.nonBindingFutility()) {
            out.println("note: non-binding futility; " + NON_BINDING_NOTE);
        }
        if (!Double.isNaN(sizing.inflation())) {
            out.println(fmt("inflation factor: %.4f", sizing.inflation()));
        }
        if (sized) {
            out.println(fmt("sample size per arm: fixed horizon %d, group-sequential maximum %d",
                    sizing.fixedPerArm(), sizing.maxPerArm()));
        }
    }

    private String header(BoundarySet plan) {
        StringBuilder h = new StringBuilder("design: ");
        h.append(sides == 2 ? "two-sided" : "one-sided").append(fmt(" alpha %s", alpha));
        h.append(fmt(", %d looks", plan.looks().size()));
        h.append(boundary != null ? ", classical " + boundary
                : ", alpha spending " + (spending == null ? "obrien-fleming" : spending));
        if (futility != null) {
            double b = beta != null ? beta : 1 - power;
            h.append(fmt(", futility %s beta %s (%s)", futility, b, binding ? "binding" : "non-binding"));
        }
        if (power != null) {
            h.append(fmt(", power %s", power));
        }
        return h.toString();
    }

    private static void printAligned(PrintWriter out, List<String[]> rows) {
        int[] width = new int[rows.get(0).length];
        for (String[] r : rows) {
            for (int i = 0; i < r.length; i++) {
                width[i] = Math.max(width[i], r[i].length());
            }
        }
        for (String[] r : rows) {
            StringBuilder line = new StringBuilder();
            for (int i = 0; i < r.length; i++) {
                line.append(i == 0 ? "" : "  ").append(" ".repeat(width[i] - r[i].length())).append(r[i]);
            }
            out.println(line);
        }
    }

    // ------------------------------------------------------------------ errors

    private <T> T core(String option, Supplier<T> step) {
        try {
            return step.get();
        } catch (StatsException e) {
            throw bad("%s: %s", option, e.getMessage());
        }
    }

    private ParameterException bad(String format, Object... args) {
        return new ParameterException(spec.commandLine(), String.format(Locale.ROOT, format, args));
    }

    /** Six decimals, or three significant digits in scientific notation below 0.001 (early OBF looks). */
    static String probability(double p) {
        return p < 0.001 ? fmt("%.2e", p) : fmt("%.6f", p);
    }

    private static String fmt(String format, Object... args) {
        return String.format(Locale.ROOT, format, args);
    }
}
