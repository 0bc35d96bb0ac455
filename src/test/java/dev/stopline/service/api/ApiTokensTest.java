package dev.stopline.service.api;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.attribute.PosixFilePermissions;
import java.util.Optional;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The token source and the filter's decision, without the framework. */
class ApiTokensTest {
    private static final String SECRET = "bookshop-ops-7d41c0b2e9a84f16";

    @TempDir
    Path dir;

    @Test
    void noTokenConfigured_generatesOneIntoTheDataDirWithOwnerOnlyPermissions_andReusesItNextStart()
            throws IOException {
        Path data = dir.resolve("data");
        ApiTokens first = new ApiTokens(Optional.empty(), "api", false, data.toString());
        Path file = data.resolve(ApiTokens.FILE_NAME);
        assertTrue(Files.exists(file), "token file written");
        assertEquals("rw-------", PosixFilePermissions.toString(Files.getPosixFilePermissions(file)), "mode 0600");
        String token = Files.readString(file, StandardCharsets.UTF_8).strip();
        // 32 random bytes in base64url without padding: ceil(32 * 8 / 6) = 43 characters
        assertEquals(43, token.length(), token);
        assertTrue(first.matches(token));
        try (var s = Files.list(data)) {
            assertEquals(1, s.count(), "no temporary file left beside it");
        }

        ApiTokens restarted = new ApiTokens(Optional.empty(), "api", false, data.toString());
        assertTrue(restarted.matches(token), "the same token after a restart");
        assertEquals(token, Files.readString(file, StandardCharsets.UTF_8).strip(), "file unchanged");
    }

    @Test
    void twoGeneratedTokens_differ() {
        ApiTokens a = new ApiTokens(Optional.empty(), "api", false, dir.resolve("a").toString());
        String tokenA = read(dir.resolve("a"));
        new ApiTokens(Optional.empty(), "api", false, dir.resolve("b").toString());
        assertFalse(a.matches(read(dir.resolve("b"))), "256 random bits: a collision would be a broken generator");
        assertTrue(a.matches(tokenA));
    }

    @Test
    void aTokenFileReadableByOthers_isNarrowedToOwnerOnly() throws IOException {
        Path file = dir.resolve(ApiTokens.FILE_NAME);
        Files.writeString(file, SECRET + "\n");
        Files.setPosixFilePermissions(file, PosixFilePermissions.fromString("rw-r--r--"));
        ApiTokens t = new ApiTokens(Optional.empty(), "api", false, dir.toString());
        assertTrue(t.matches(SECRET), "the existing file's token is used, whitespace stripped");
        assertEquals("rw-------", PosixFilePermissions.toString(Files.getPosixFilePermissions(file)));
    }

    @Test
    void aConfiguredToken_winsAndNothingIsWritten() {
        ApiTokens t = new ApiTokens(Optional.of(" " + SECRET + " "), "ci-bot", false, dir.toString());
        assertTrue(t.matches(SECRET));
        assertEquals("ci-bot", t.name());
        assertFalse(Files.exists(dir.resolve(ApiTokens.FILE_NAME)), "no file when the secret is configured");
    }

    @Test
    void matches_refusesEverythingButTheExactToken() {
        ApiTokens t = new ApiTokens(Optional.of(SECRET), "api", false, dir.toString());
        assertTrue(t.matches(SECRET));
        for (String wrong : new String[] {null, "", SECRET.substring(0, SECRET.length() - 1), SECRET + "x",
                SECRET.toUpperCase(java.util.Locale.ROOT), " " + SECRET}) {
            assertFalse(t.matches(wrong), () -> "accepted '" + wrong + "'");
        }
    }

    @Test
    void authorizes_needsTheBearerSchemeInAnyCase_andTheToken() {
        ApiTokens t = new ApiTokens(Optional.of(SECRET), "api", false, dir.toString());
        assertTrue(t.authorizes("Bearer " + SECRET));
        assertTrue(t.authorizes("bearer " + SECRET), "auth schemes are case-insensitive (RFC 7235 section 2.1)");
        assertFalse(t.authorizes(null));
        assertFalse(t.authorizes(SECRET), "no scheme");
        assertFalse(t.authorizes("Basic " + SECRET));
        assertFalse(t.authorizes("Bearer"));
        assertFalse(t.authorizes("Bearer wrong-token-0000000000"));
    }

    @Test
    void filterDecision_readsOpenByDefault_writesAlwaysNeedTheToken() {
        ApiTokens open = new ApiTokens(Optional.of(SECRET), "api", false, dir.toString());
        assertTrue(BearerTokenFilter.allowed(open, "GET", null));
        assertTrue(BearerTokenFilter.allowed(open, "HEAD", null));
        for (String write : new String[] {"POST", "PUT", "PATCH", "DELETE"}) {
            assertFalse(BearerTokenFilter.allowed(open, write, null), write);
            assertFalse(BearerTokenFilter.allowed(open, write, "Bearer nope"), write);
            assertTrue(BearerTokenFilter.allowed(open, write, "Bearer " + SECRET), write);
        }
    }

    @Test
    void filterDecision_protectReadsClosesReadsToo() {
        ApiTokens closed = new ApiTokens(Optional.of(SECRET), "api", true, dir.toString());
        assertFalse(BearerTokenFilter.allowed(closed, "GET", null));
        assertFalse(BearerTokenFilter.allowed(closed, "HEAD", "Bearer nope"));
        assertTrue(BearerTokenFilter.allowed(closed, "GET", "Bearer " + SECRET));
    }

    @Test
    void tokenName_mustFitTheAuditActorColumn() {
        assertThrows(IllegalArgumentException.class, () -> new ApiTokens(Optional.of(SECRET), " ", false, "x"));
        assertThrows(IllegalArgumentException.class,
                () -> new ApiTokens(Optional.of(SECRET), "n".repeat(129), false, "x"));
    }

    private static String read(Path data) {
        try {
            return Files.readString(data.resolve(ApiTokens.FILE_NAME)).strip();
        } catch (IOException e) {
            throw new java.io.UncheckedIOException(e);
        }
    }
}
