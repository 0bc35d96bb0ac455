package dev.stopline.testing;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.net.InetAddress;
import java.net.ServerSocket;

/** Free TCP ports on the loopback interface, for brokers and HTTP servers started by tests. */
public final class FreePorts {
    private FreePorts() {
    }

    /**
     * A port that was free a moment ago on 127.0.0.1. Another process may take it before the caller binds
     * it (a small race accepted in tests); ports are asked of the operating system, never guessed.
     */
    public static int pick() {
        try (ServerSocket s = new ServerSocket(0, 1, InetAddress.getLoopbackAddress())) {
            s.setReuseAddress(true);
            return s.getLocalPort();
        } catch (IOException e) {
            throw new UncheckedIOException("no free loopback port", e);
        }
    }

    /** Two distinct free ports (client and controller listener of a broker). */
    public static int[] pickTwo() {
        int a = pick();
        int b = pick();
        while (b == a) {
            b = pick();
        }
        return new int[] {a, b};
    }
}
