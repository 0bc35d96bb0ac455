package dev.stopline.plan;

import java.util.List;
import java.util.stream.Collectors;

/**
 * A stopping plan was rejected. Carries every problem found, not only the first, so that a user
 * fixes a file in one round; the message lists them one per line.
 */
public final class PlanException extends IllegalArgumentException {
    private static final long serialVersionUID = 1L;

    private final transient List<PlanProblem> problems;

    public PlanException(List<PlanProblem> problems) {
        super(message(problems));
        if (problems.isEmpty()) {
            throw new IllegalArgumentException("a PlanException needs at least one problem");
        }
        this.problems = List.copyOf(problems);
    }

    /** All problems, in document order as far as it is known. */
    public List<PlanProblem> problems() {
        return problems;
    }

    private static String message(List<PlanProblem> problems) {
        String lines = problems.stream().map(PlanProblem::toString).collect(Collectors.joining("\n  "));
        return "invalid stopping plan (" + problems.size() + (problems.size() == 1 ? " problem" : " problems")
                + "):\n  " + lines;
    }
}
