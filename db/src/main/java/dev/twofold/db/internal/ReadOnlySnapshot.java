package dev.twofold.db.internal;

import dev.twofold.db.connect.Database;
import java.io.IOException;
import java.sql.Connection;
import java.sql.SQLException;
import org.postgresql.PGConnection;
import org.postgresql.copy.CopyManager;

/** Runs reads in one REPEATABLE READ, READ ONLY transaction, so they all see the same committed state. */
public final class ReadOnlySnapshot {

    private ReadOnlySnapshot() {
    }

    /** The work done inside the snapshot. */
    public interface Reads<T> {
        T run(Connection c, CopyManager copy) throws SQLException, IOException;
    }

    public static <T> T read(Database database, String doing, Reads<T> reads) {
        try (Connection c = database.dataSource().getConnection()) {
            c.setAutoCommit(false);
            c.setTransactionIsolation(Connection.TRANSACTION_REPEATABLE_READ);
            c.setReadOnly(true);
            try {
                T result = reads.run(c, c.unwrap(PGConnection.class).getCopyAPI());
                c.commit();
                return result;
            } catch (SQLException | IOException | RuntimeException e) {
                try {
                    c.rollback();
                } catch (SQLException ignored) {
                    // broken connection; the pool discards it
                }
                throw e;
            }
        } catch (SQLException e) {
            throw SqlFailures.translate(e, doing, database.description());
        } catch (IOException e) {
            throw SqlFailures.translate(new SQLException(e.getMessage(), "08006", e), doing, database.description());
        }
    }
}
