import type { SampleOutcomeRecord } from '#shared/utils/schemas/sample'
import type { FieldDatabase } from './field-db'

// Non-interviews of listed farms (refused, nobody at home, moved), recorded offline. They wait in the `cache` table
// under `sampleOutcomes` (so the tablet's encryption covers them like everything else) until the server has them;
// one the server refuses stays with its reason and is not sent again.

export interface LocalSampleOutcome extends SampleOutcomeRecord {
  /** Set when the server refused it (not assigned any more, farm no longer on the list). */
  error?: string
  /** The server has it; kept until the cached setup shows it, so the list never forgets it in between. */
  sent?: boolean
}

export async function localSampleOutcomes(db: FieldDatabase): Promise<LocalSampleOutcome[]> {
  return ((await db.cache.get('sampleOutcomes'))?.value as LocalSampleOutcome[] | undefined) ?? []
}

const sameFarm = (a: SampleOutcomeRecord, b: SampleOutcomeRecord) =>
  a.roundId === b.roundId && a.villageId === b.villageId && a.farmCode.toLowerCase() === b.farmCode.toLowerCase()

/** Records (or replaces) the outcome of one listed farm on this tablet. */
export async function recordSampleOutcome(db: FieldDatabase, outcome: SampleOutcomeRecord): Promise<void> {
  await db.transaction('rw', db.cache, async () => {
    const held = (await localSampleOutcomes(db)).filter(o => !sameFarm(o, outcome))
    await db.cache.put({ key: 'sampleOutcomes', value: [...held, outcome] })
  })
}

/** Sends the waiting outcomes; `call` is the sync pass's fetch (offline, session and busy errors handled there). */
export async function pushSampleOutcomes(db: FieldDatabase, call: (url: string, init?: RequestInit) => Promise<Response>): Promise<number> {
  await pruneSentOutcomes(db)
  const waiting = (await localSampleOutcomes(db)).filter(o => !o.error && !o.sent)
  if (!waiting.length) return 0
  const sent = waiting.slice(0, 500)
  const response = await call('/api/field/sample-outcomes', {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify({ outcomes: sent.map(({ error: _error, ...o }) => o) })
  })
  if (!response.ok && response.status !== 422) throw new Error(`The server answered ${response.status} to the farms not interviewed.`)
  const answer = await response.json() as { results: Array<{ index: number, status: 'stored' | 'rejected', message?: string }> }
  let stored = 0
  await db.transaction('rw', db.cache, async () => {
    // Only the records sent and unchanged since are settled: an outcome recorded meanwhile stays to be sent.
    const now = await localSampleOutcomes(db)
    const next = now.flatMap((o) => {
      const i = sent.findIndex(s => sameFarm(s, o) && s.recordedAt === o.recordedAt && s.outcome === o.outcome)
      const result = i >= 0 ? answer.results.find(r => r.index === i) : undefined
      if (!result) return [o]
      if (result.status === 'stored') {
        stored++
        return [{ ...o, sent: true }]
      }
      return [{ ...o, error: result.message ?? 'Refused by the server' }]
    })
    await db.cache.put({ key: 'sampleOutcomes', value: next })
  })
  return stored
}

/** Drops the sent outcomes that the cached setup (the server's copy of the lists) already shows. */
async function pruneSentOutcomes(db: FieldDatabase): Promise<void> {
  const setup = await db.setup()
  await db.transaction('rw', db.cache, async () => {
    const held = await localSampleOutcomes(db)
    const next = held.filter((o) => {
      if (!o.sent) return true
      const farm = setup?.samples?.find(l => l.roundId === o.roundId && l.villageId === o.villageId)?.farms
        .find(f => f.farmCode.toLowerCase() === o.farmCode.toLowerCase())
      return farm?.outcome !== o.outcome
    })
    if (next.length !== held.length) await db.cache.put({ key: 'sampleOutcomes', value: next })
  })
}
