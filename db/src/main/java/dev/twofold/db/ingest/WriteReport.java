package dev.twofold.db.ingest;

/**
 * What a committed batch did.
 *
 * @param received rows in the batch
 * @param written  rows that changed the table (new or different); duplicates and older ratings do not count
 * @param newUsers ids seen for the first time
 * @param newItems ids seen for the first time (always 0 for trust)
 */
public record WriteReport(int received, int written, int newUsers, int newItems) {
}
