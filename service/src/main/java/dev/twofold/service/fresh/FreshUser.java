package dev.twofold.service.fresh;

import dev.twofold.db.snapshot.UserHistory;
import dev.twofold.service.scoring.UserVector;

/**
 * A user folded in since the model was loaded: their history as read after their last write, and
 * the vector solved from it against one model.
 *
 * @param userId    external id
 * @param sequence  order of the write that produced it (higher is newer)
 * @param writtenAt when it was folded, epoch milliseconds of the service clock
 * @param history   ratings and trust edges as stored after the write (directory indices)
 * @param vector    the user as that model serves them
 */
public record FreshUser(String userId, long sequence, long writtenAt, UserHistory history, UserVector vector) {
}
