package dev.stopline.stats.groupseq;

import dev.stopline.stats.StatsException;
import java.util.function.DoubleSupplier;
import java.util.function.DoubleUnaryOperator;

/**
 * Bounded Brent-Dekker root finding (Brent 1973, ch. 4, the {@code zeroin} algorithm: inverse
 * quadratic interpolation and secant steps safeguarded by bisection), with an explicit budget of
 * function evaluations and an evaluation count that tests assert.
 *
 * <p>Adapted in two ways: (1) it also stops when {@code |f(x)| <= fTol}, because the boundary
 * functions are log-probability ratios for which that is the accuracy that matters; (2)
 * {@link #solveDecreasing} first brackets a monotone decreasing function by stepping outward from a
 * guess (doubling steps) within hard limits, and returns a limit when the root lies beyond it.
 *
 * <p>Reference: Brent RP (1973). Algorithms for Minimization without Derivatives. Prentice-Hall.
 */
final class RootFinder {
    private static final double EPS = Math.ulp(1.0);

    private final double xTol;
    private final double fTol;
    private final int maxEvaluations;
    private int evaluations;
    private int total;
    private int worst;

    RootFinder(double xTol, double fTol, int maxEvaluations) {
        this.xTol = xTol;
        this.fTol = fTol;
        this.maxEvaluations = maxEvaluations;
    }

    /** Evaluations used by all solves of this instance so far. */
    int totalEvaluations() {
        return total;
    }

    /** The largest number of evaluations a single solve of this instance needed. */
    int worstSolveEvaluations() {
        return worst;
    }

    /** The budget of one solve. */
    int maxEvaluations() {
        return maxEvaluations;
    }

    private double eval(DoubleUnaryOperator f, double x) {
        if (++evaluations > maxEvaluations) {
            throw new StatsException("root finder exceeded its budget of %d function evaluations per solve", maxEvaluations);
        }
        total++;
        worst = Math.max(worst, evaluations);
        double y = f.applyAsDouble(x);
        if (y != y) {
            throw new StatsException("root finder met NaN at x = %s", x);
        }
        return y;
    }

    /**
     * Root of a decreasing {@code f} in {@code [floor, ceiling]}, searched outward from {@code guess}
     * with first step {@code step}. Returns {@code floor} when {@code f(floor) < 0} and
     * {@code ceiling} when {@code f(ceiling) > 0} (the root lies beyond the limits).
     */
    double solveDecreasing(DoubleUnaryOperator f, double guess, double step, double floor, double ceiling) {
        evaluations = 0;
        double x0 = Math.min(ceiling, Math.max(floor, guess));
        double f0 = eval(f, x0);
        if (Math.abs(f0) <= fTol) {
            return x0;
        }
        double d = step;
        while (true) {
            double x1 = f0 > 0 ? Math.min(ceiling, x0 + d) : Math.max(floor, x0 - d);
            if (x1 == x0) {
                return x0; // at a limit: the root lies beyond it
            }
            double f1 = eval(f, x1);
            if ((f0 > 0) != (f1 > 0) || Math.abs(f1) <= fTol) {
                return f0 > 0 ? brent(f, x0, x1, f0, f1) : brent(f, x1, x0, f1, f0);
            }
            x0 = x1;
            f0 = f1;
            d *= 2;
        }
    }

    /**
     * Root of a decreasing {@code f} in {@code [floor, ceiling]} by Newton's method safeguarded by a
     * bracket, for functions whose derivative comes almost free with the value ({@code slope} reports
     * f' at the point last evaluated). A Newton step that leaves the current bracket, or meets a
     * non-negative or non-finite slope, is replaced by bisection once the root is bracketed and by an
     * outward step (doubling from {@code step}) before. Stops when |f| &lt;= fTol, when a step is at
     * most xTol, or when two Newton steps in a row, h' then h, predict an error after the last of
     * about h^3 / h'^2 &lt;= xTol (quadratic convergence, e_{n+1} = K e_n^2 with K ~ h / h'^2). Limits as in
     * {@link #solveDecreasing}: returns {@code floor} when f(floor) &lt; 0 and {@code ceiling} when
     * f(ceiling) &gt; 0.
     *
     * <p>Why: the bound functions are log exit probabilities whose derivative is the same grid sum
     * with the normal density in place of the tail, so a Newton step costs one evaluation; from a
     * warm start it converges in 2-3 evaluations where bracketing plus Brent took 6-9.
     */
    double solveNewton(DoubleUnaryOperator f, DoubleSupplier slope, double guess, double step, double floor,
                       double ceiling) {
        evaluations = 0;
        double lo = floor;
        double hi = ceiling;
        boolean haveLo = false;
        boolean haveHi = false;
        double x = Math.min(ceiling, Math.max(floor, guess));
        double d = step;
        double lastNewton = Double.NaN;
        while (true) {
            double y = eval(f, x);
            if (Math.abs(y) <= fTol) {
                return x;
            }
            if (y > 0) {
                if (x >= ceiling) {
                    return ceiling;
                }
                lo = x;
                haveLo = true;
            } else {
                if (x <= floor) {
                    return floor;
                }
                hi = x;
                haveHi = true;
            }
            double s = slope.getAsDouble();
            double next = x - y / s;
            boolean newton = s < 0 && next > lo && next < hi;
            if (!newton) {
                if (haveLo && haveHi) {
                    next = 0.5 * (lo + hi);
                } else {
                    next = y > 0 ? Math.min(ceiling, x + d) : Math.max(floor, x - d);
                    d *= 2;
                }
            }
            double h = Math.abs(next - x);
            // Two Newton steps in a row estimate the quadratic constant K ~ h / h_prev^2; the error left
            // after this step is about K h^2 = h^3 / h_prev^2.
            if (h <= xTol || (newton && h * h * h <= xTol * lastNewton * lastNewton)) {
                return next;
            }
            lastNewton = newton ? h : Double.NaN;
            x = next;
        }
    }

    /** Brent's zeroin on a bracket {@code f(a) f(b) <= 0}. */
    double solve(DoubleUnaryOperator f, double a, double b) {
        evaluations = 0;
        double fa = eval(f, a);
        double fb = eval(f, b);
        if ((fa > 0) == (fb > 0) && fa != 0 && fb != 0) {
            throw new StatsException("no sign change of the function on [%s, %s]: f = %s, %s", a, b, fa, fb);
        }
        return brent(f, a, b, fa, fb);
    }

    private double brent(DoubleUnaryOperator f, double a, double b, double fa, double fb) {
        double c = a;
        double fc = fa;
        double d = b - a;
        double e = d;
        while (true) {
            if ((fb > 0) == (fc > 0)) {
                c = a;
                fc = fa;
                d = b - a;
                e = d;
            }
            if (Math.abs(fc) < Math.abs(fb)) {
                a = b;
                b = c;
                c = a;
                fa = fb;
                fb = fc;
                fc = fa;
            }
            double tol1 = 2 * EPS * Math.abs(b) + 0.5 * xTol;
            double xm = 0.5 * (c - b);
            if (Math.abs(xm) <= tol1 || Math.abs(fb) <= fTol) {
                return b;
            }
            if (Math.abs(e) >= tol1 && Math.abs(fa) > Math.abs(fb)) {
                double s = fb / fa;
                double p;
                double q;
                if (a == c) {
                    p = 2 * xm * s;
                    q = 1 - s;
                } else {
                    double qq = fa / fc;
                    double r = fb / fc;
                    p = s * (2 * xm * qq * (qq - r) - (b - a) * (r - 1));
                    q = (qq - 1) * (r - 1) * (s - 1);
                }
                if (p > 0) {
                    q = -q;
                } else {
                    p = -p;
                }
                if (2 * p < Math.min(3 * xm * q - Math.abs(tol1 * q), Math.abs(e * q))) {
                    e = d;
                    d = p / q;
                } else {
                    d = xm;
                    e = d;
                }
            } else {
                d = xm;
                e = d;
            }
            a = b;
            fa = fb;
            b += Math.abs(d) > tol1 ? d : Math.copySign(tol1, xm);
            fb = eval(f, b);
        }
    }
}
