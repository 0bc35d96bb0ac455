package dev.stopline.service.broker;

import java.time.Duration;
import java.util.concurrent.TimeUnit;

import org.jboss.logging.Logger;

/**
 * Runs a shutdown action on its own daemon thread and waits for it at most a given time. Kafka's broker
 * shutdown has been seen to hang (a controlled shutdown that never gets its answer, a purgatory that never
 * drains); the daemon must still stop, so past the limit the action is abandoned and a warning names it.
 */
public final class BoundedShutdown {
    private static final Logger LOG = Logger.getLogger(BoundedShutdown.class);

    private BoundedShutdown() {
    }

    /**
     * Runs {@code action} on a daemon thread named {@code stopline-shutdown-<what>} and joins it for at most
     * {@code limit}.
     *
     * @return true if the action finished (normally or by throwing, which is logged) within the limit;
     *     false if it was abandoned still running
     */
    public static boolean run(String what, Runnable action, Duration limit) {
        Thread t = new Thread(() -> {
            try {
                action.run();
            } catch (RuntimeException e) {
                LOG.warnf(e, "shutdown of %s failed", what);
            }
        }, "stopline-shutdown-" + what);
        t.setDaemon(true);
        long t0 = System.nanoTime();
        t.start();
        try {
            t.join(Math.max(1, limit.toMillis()));
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
        long ms = TimeUnit.NANOSECONDS.toMillis(System.nanoTime() - t0);
        if (t.isAlive()) {
            LOG.warnf("shutdown of %s not finished after %d ms (limit %d ms); abandoned it on thread %s",
                    what, ms, limit.toMillis(), t.getName());
            return false;
        }
        LOG.debugf("shutdown of %s finished in %d ms", what, ms);
        return true;
    }
}
