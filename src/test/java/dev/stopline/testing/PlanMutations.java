package dev.stopline.testing;

import java.io.ByteArrayOutputStream;
import java.nio.charset.StandardCharsets;
import java.util.SplittableRandom;

/** Seeded edits of plan documents for the fuzz tests (the parser's and the daemon's). */
public final class PlanMutations {
    /** Characters that matter to YAML and JSON, inserted as noise. */
    private static final String NOISE = " :-[]{},&*!|>'\"#\n\tx0.";

    private PlanMutations() {
    }

    /** One byte-level edit: overwrite, delete or insert noise, or cut the document short. */
    public static byte[] bytes(byte[] in, SplittableRandom rnd) {
        if (in.length == 0) {
            return in;
        }
        ByteArrayOutputStream out = new ByteArrayOutputStream();
        int at = rnd.nextInt(in.length);
        int len = 1 + rnd.nextInt(Math.min(12, in.length - at));
        switch (rnd.nextInt(4)) {
            case 0 -> {
                byte[] c = in.clone();
                c[at] = (byte) rnd.nextInt(256);
                return c;
            }
            case 1 -> {
                out.write(in, 0, at);
                out.write(in, at + len, in.length - at - len);
            }
            case 2 -> {
                out.write(in, 0, at);
                for (int k = 0; k < len; k++) {
                    out.write(NOISE.charAt(rnd.nextInt(NOISE.length())));
                }
                out.write(in, at, in.length - at);
            }
            default -> out.write(in, 0, at);
        }
        return out.toByteArray();
    }

    /** Replaces the value of one "key: value" line with one of {@code values} (hostile YAML). */
    public static byte[] yamlValue(String doc, SplittableRandom rnd, String[] values) {
        String[] lines = doc.split("\n", -1);
        int i = rnd.nextInt(lines.length);
        int colon = lines[i].indexOf(": ");
        if (colon >= 0) {
            lines[i] = lines[i].substring(0, colon + 2) + values[rnd.nextInt(values.length)];
        }
        return String.join("\n", lines).getBytes(StandardCharsets.UTF_8);
    }
}
