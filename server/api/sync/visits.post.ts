// Device → server: a batch of visits, upserted by their device-made ids in one transaction.
export default defineRoleHandler(['enumerator'], async (event, user) => {
  // 500 visits are well under 4 MB; the body's limit is its rule in server/utils/request-rules.ts.
  // At most a few batches per person at once (429 beyond), so one device cannot take every connection.
  return withSyncSlot(event, user.id, async () => {
    const body = await readValidatedBody(event, validateWith(syncBatchSchema))
    const answer = await withIngestSlot(() => ingestVisits(user, body.visits))
    // Nothing in the batch could be stored: a 4xx, with the reasons per record.
    if (answer.counts.rejected === answer.results.length) {
      setResponseStatus(event, 422)
      return { message: 'No visit in this batch could be stored; see the reasons per record.', ...answer }
    }
    return answer
  })
})
