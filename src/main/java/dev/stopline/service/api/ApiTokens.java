package dev.stopline.service.api;

import io.quarkus.runtime.Startup;
import jakarta.inject.Inject;
import jakarta.inject.Singleton;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.FileAlreadyExistsException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.attribute.PosixFilePermission;
import java.nio.file.attribute.PosixFilePermissions;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;
import java.security.SecureRandom;
import java.util.Base64;
import java.util.Locale;
import java.util.Optional;
import java.util.Set;
import org.eclipse.microprofile.config.inject.ConfigProperty;
import org.jboss.logging.Logger;

/**
 * The API's bearer token and who it stands for.
 *
 * <p>The secret is {@code stopline.api.token} (environment {@code STOPLINE_API_TOKEN}). When neither is
 * set, a token is generated at first start (256 bits from {@link SecureRandom}, base64url), written to
 * {@code <stopline.data-dir>/api-token} with owner-only permissions (0600, set at creation, so it is never
 * readable by others even for a moment) and printed once to the log; later starts read the same file.
 *
 * <p>Only SHA-256 digests are kept and compared, with {@link MessageDigest#isEqual} (constant time for
 * equal lengths; the digests always have equal length), so neither the token's content nor its length
 * leaks through timing. The token's name ({@code stopline.api.token-name}, default {@code api}) is the
 * actor recorded in the audit trail for calls made with it.
 */
@Singleton
@Startup
public class ApiTokens {
    public static final String FILE_NAME = "api-token";
    private static final Logger LOG = Logger.getLogger(ApiTokens.class);
    private static final int GENERATED_BYTES = 32;
    private static final int SHORTEST_ADVISED = 16;
    private static final Set<PosixFilePermission> OWNER_ONLY = PosixFilePermissions.fromString("rw-------");

    private final byte[] digest;
    private final String name;
    private final boolean protectReads;

    @Inject
    public ApiTokens(@ConfigProperty(name = "stopline.api.token") Optional<String> configured,
                     @ConfigProperty(name = "stopline.api.token-name", defaultValue = "api") String name,
                     @ConfigProperty(name = "stopline.api.protect-reads", defaultValue = "false") boolean protectReads,
                     @ConfigProperty(name = "stopline.data-dir", defaultValue = "data") String dataDir) {
        String n = name == null ? "" : name.strip();
        if (n.isEmpty() || n.length() > 128) {
            throw new IllegalArgumentException("stopline.api.token-name must have 1 to 128 characters, got '" + n + "'");
        }
        this.name = n;
        this.protectReads = protectReads;
        String secret = configured.map(String::strip).filter(s -> !s.isEmpty())
                .orElseGet(() -> fromFile(Path.of(dataDir).resolve(FILE_NAME)));
        if (secret.length() < SHORTEST_ADVISED) {
            LOG.warnf("the API token has %d characters; use at least %d random ones", secret.length(),
                    SHORTEST_ADVISED);
        }
        this.digest = sha256(secret);
    }

    /** The actor recorded for calls authenticated with this token. */
    public String name() {
        return name;
    }

    /** Whether read-only calls need the token too ({@code stopline.api.protect-reads}). */
    public boolean protectReads() {
        return protectReads;
    }

    /** Whether {@code presented} is the token; constant time in its content and length. */
    public boolean matches(String presented) {
        return presented != null && MessageDigest.isEqual(digest, sha256(presented));
    }

    /**
     * Whether an {@code Authorization} header value carries the token: the scheme {@code Bearer} (any case,
     * RFC 7235 section 2.1) and the token after it.
     */
    public boolean authorizes(String authorizationHeader) {
        if (authorizationHeader == null) {
            return false;
        }
        String h = authorizationHeader.strip();
        int space = h.indexOf(' ');
        if (space < 0 || !h.substring(0, space).toLowerCase(Locale.ROOT).equals("bearer")) {
            return false;
        }
        return matches(h.substring(space + 1).strip());
    }

    /** Reads the token file, or creates it with a fresh token (owner-only) and logs the token once. */
    static String fromFile(Path file) {
        try {
            if (Files.exists(file)) {
                tighten(file);
                String token = Files.readString(file, StandardCharsets.UTF_8).strip();
                if (token.isEmpty()) {
                    throw new IllegalStateException("the API token file " + file + " is empty; delete it to get a "
                            + "new token or set STOPLINE_API_TOKEN");
                }
                LOG.infof("API token read from %s", file.toAbsolutePath());
                return token;
            }
            String token = generate();
            if (!write(file, token)) {
                return fromFile(file); // another instance on the same data directory created it first
            }
            LOG.infof("generated an API token for the mutating REST calls, stored in %s (owner-only); send "
                    + "'Authorization: Bearer %s'. It is printed only this once.", file.toAbsolutePath(), token);
            return token;
        } catch (IOException e) {
            throw new UncheckedIOException("cannot read or create the API token file " + file
                    + " (set STOPLINE_API_TOKEN instead, or fix the data directory)", e);
        }
    }

    private static String generate() {
        byte[] b = new byte[GENERATED_BYTES];
        new SecureRandom().nextBytes(b);
        return Base64.getUrlEncoder().withoutPadding().encodeToString(b);
    }

    /**
     * Writes through a temporary file created owner-only, then moves it in place (never readable by others);
     * false if the file appeared meanwhile.
     */
    private static boolean write(Path file, String token) throws IOException {
        Path dir = file.toAbsolutePath().getParent();
        Files.createDirectories(dir);
        Path tmp = Files.createTempFile(dir, FILE_NAME, ".tmp", PosixFilePermissions.asFileAttribute(OWNER_ONLY));
        Files.writeString(tmp, token + "\n", StandardCharsets.UTF_8);
        try {
            Files.move(tmp, file);
            return true;
        } catch (FileAlreadyExistsException e) {
            Files.deleteIfExists(tmp);
            return false;
        }
    }

    /** A token file that others may read is narrowed to owner-only, with a warning. */
    private static void tighten(Path file) throws IOException {
        try {
            Set<PosixFilePermission> p = Files.getPosixFilePermissions(file);
            if (!OWNER_ONLY.containsAll(p)) {
                Files.setPosixFilePermissions(file, OWNER_ONLY);
                LOG.warnf("the API token file %s was readable by others (%s); narrowed to rw-------; consider "
                        + "replacing the token", file, PosixFilePermissions.toString(p));
            }
        } catch (UnsupportedOperationException e) {
            // not a POSIX file system
        }
    }

    private static byte[] sha256(String s) {
        try {
            return MessageDigest.getInstance("SHA-256").digest(s.getBytes(StandardCharsets.UTF_8));
        } catch (NoSuchAlgorithmException e) {
            throw new IllegalStateException("every Java platform has SHA-256", e);
        }
    }
}
