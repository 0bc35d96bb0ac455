package dev.stopline.service.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.sql.SQLException;
import java.sql.SQLRecoverableException;
import java.sql.SQLTransientConnectionException;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

/**
 * Which database failures hold the stream (retry for as long as it takes) and which may be a record's
 * own problem. SQLSTATE classes from the SQL standard (ISO/IEC 9075: class 08 connection exception,
 * 40 transaction rollback, 25006 read-only SQL transaction, 23 integrity constraint violation, 22 data
 * exception) and PostgreSQL's documented codes (appendix "PostgreSQL Error Codes": 53 insufficient
 * resources, 57P01 admin shutdown); H2's codes from its ErrorCode class (90098 database closed).
 */
class StoreExceptionTest {
    @ParameterizedTest(name = "SQLSTATE {0}: transient = {1}")
    @CsvSource({
        "08006, true",   // connection failure
        "08001, true",   // unable to establish a connection
        "57P01, true",   // PostgreSQL: terminating connection due to administrator command
        "53300, true",   // PostgreSQL: too many connections
        "25006, true",   // read-only SQL transaction (a standby)
        "40001, true",   // serialization failure
        "40P01, true",   // PostgreSQL: deadlock detected
        "90098, true",   // H2: database is closed
        "23505, false",  // unique violation: handled where it occurs, never a reason to hold
        "22003, false",  // numeric value out of range: the record's own problem
        "42P01, false",  // undefined table: a defect, not a state that passes
    })
    void sqlState_decidesWhetherTheWriteIsHeld(String state, boolean transientFailure) {
        Store.StoreException e = new Store.StoreException(new SQLException("x", state));
        assertEquals(transientFailure, e.transientFailure(), state);
    }

    @ParameterizedTest(name = "{0}")
    @CsvSource({"recoverable", "transient-connection"})
    void jdbcExceptionClasses_ofATransientKind_holdEvenWithoutAState(String kind) {
        SQLException cause = kind.equals("recoverable") ? new SQLRecoverableException("gone")
                : new SQLTransientConnectionException("pool timed out");
        assertTrue(new Store.StoreException(cause).transientFailure());
    }

    @Test
    void noStateAndAPlainException_isNotHeld_byItself() {
        assertFalse(new Store.StoreException(new SQLException("no state")).transientFailure(),
                "the ingest then asks whether the database answers at all");
    }
}
