package dev.stopline.service.store;

import io.agroal.api.AgroalDataSource;
import io.agroal.api.configuration.supplier.AgroalPropertiesReader;
import jakarta.enterprise.context.ApplicationScoped;
import jakarta.enterprise.inject.Disposes;
import jakarta.enterprise.inject.Produces;
import jakarta.inject.Singleton;
import java.sql.SQLException;
import java.util.HashMap;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;
import javax.sql.DataSource;
import org.eclipse.microprofile.config.inject.ConfigProperty;
import org.flywaydb.core.Flyway;
import org.jboss.logging.Logger;

/**
 * The daemon's database, chosen at run time by its JDBC URL: the embedded H2 file database by default
 * ({@code ./data/db}), PostgreSQL in production ({@code --jdbc-url jdbc:postgresql://...} or
 * {@code STOPLINE_DB_URL}). One build serves both: the driver follows from the URL, and the Flyway
 * migrations in {@code db/migration} use only SQL both engines accept. Migrations run before the
 * first use.
 */
@ApplicationScoped
public class Database {
    private static final Logger LOG = Logger.getLogger(Database.class);

    @Produces
    @Singleton
    DataSource dataSource(@ConfigProperty(name = "stopline.db.url") String url,
                          @ConfigProperty(name = "stopline.db.user") Optional<String> user,
                          @ConfigProperty(name = "stopline.db.password") Optional<String> password,
                          @ConfigProperty(name = "stopline.db.max-connections", defaultValue = "8") int max) {
        Map<String, String> p = new HashMap<>();
        p.put(AgroalPropertiesReader.JDBC_URL, url);
        p.put(AgroalPropertiesReader.PROVIDER_CLASS_NAME, driverOf(url));
        user.ifPresent(u -> p.put(AgroalPropertiesReader.PRINCIPAL, u));
        password.ifPresent(pw -> p.put(AgroalPropertiesReader.CREDENTIAL, pw));
        p.put(AgroalPropertiesReader.MIN_SIZE, "1");
        p.put(AgroalPropertiesReader.INITIAL_SIZE, "1");
        p.put(AgroalPropertiesReader.MAX_SIZE, Integer.toString(max));
        p.put(AgroalPropertiesReader.ACQUISITION_TIMEOUT_S, "10");
        p.put(AgroalPropertiesReader.VALIDATION_TIMEOUT_S, "30");
        // after a database outage, pooled connections are dead: check each one before it is handed out,
        // so that the ingest's retry loop gets a fresh connection once the database is back
        p.put(AgroalPropertiesReader.CONNECTION_VALIDATOR, "default");
        p.put(AgroalPropertiesReader.VALIDATE_ON_BORROW, "true");
        try {
            AgroalDataSource ds = AgroalDataSource.from(new AgroalPropertiesReader().readProperties(p).get());
            Flyway.configure(Database.class.getClassLoader()).dataSource(ds).locations("classpath:db/migration")
                    .load().migrate();
            LOG.infof("database %s ready", redact(url));
            return ds;
        } catch (SQLException e) {
            throw new IllegalStateException("cannot open database " + redact(url) + ": " + e.getMessage(), e);
        }
    }

    void close(@Disposes DataSource ds) {
        if (ds instanceof AgroalDataSource a) {
            a.close();
        }
    }

    static String driverOf(String url) {
        String u = url.toLowerCase(Locale.ROOT);
        if (u.startsWith("jdbc:h2:")) {
            return "org.h2.Driver";
        }
        if (u.startsWith("jdbc:postgresql:")) {
            return "org.postgresql.Driver";
        }
        throw new IllegalArgumentException("unsupported JDBC URL " + redact(url)
                + ": use jdbc:h2:... (embedded) or jdbc:postgresql://host/db");
    }

    /** The URL without anything after '?' or ';' (passwords may be there). */
    static String redact(String url) {
        int cut = url.length();
        for (char c : new char[] {'?', ';'}) {
            int i = url.indexOf(c);
            if (i >= 0) {
                cut = Math.min(cut, i);
            }
        }
        return url.substring(0, cut);
    }
}
