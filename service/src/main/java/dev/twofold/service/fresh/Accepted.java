package dev.twofold.service.fresh;

import dev.twofold.db.ingest.WriteReport;

/**
 * A batch the database committed, and how many of its users were folded in afterwards.
 *
 * @param report      what the write did
 * @param foldedUsers users whose vectors were re-solved (0 when no model is loaded yet, or when
 *                    re-reading failed after the commit: the data is safe, the next model load
 *                    reads it)
 */
public record Accepted(WriteReport report, int foldedUsers) {
}
