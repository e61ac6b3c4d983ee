import { QueryTypes, type Transaction } from 'sequelize'
import { database } from '../db/connection'

/**
 * Marks a change to a round's accepted visits. Call it inside the transaction that makes the change (review
 * actions, imports): model runs compare the round's counter with the one they read their rows at, so telling
 * whether a run's data changed costs one primary-key read instead of re-reading every visit.
 * Sync does not call it: it never writes an accepted visit (a device edit of one answers `conflict`), and a
 * write to the round row on every batch would make concurrent syncs of one round wait for each other.
 */
export async function bumpDataVersion(roundId: number, transaction: Transaction): Promise<void> {
  await database().query('UPDATE rounds SET data_version = data_version + 1 WHERE id = ?', { replacements: [roundId], transaction, type: QueryTypes.UPDATE })
}
