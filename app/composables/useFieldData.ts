import { liveQuery } from 'dexie'
import type { FieldSetup } from '#shared/types/field'
import { type LocalPhoto, type LocalVisit, fieldDb } from '~/utils/field-db'
import { isOpen } from '~/utils/field-vault'

/** Live views of the tablet's database: the cached setup, every local visit and photo, and the counts. */
export function useFieldData() {
  const { user } = useUserSession()
  const setup = ref<FieldSetup | null>(null)
  const visits = ref<LocalVisit[]>([])
  const photos = ref<Array<Omit<LocalPhoto, 'blob'>>>([])
  const loaded = ref(false)
  const subscriptions: Array<{ unsubscribe: () => void }> = []

  onMounted(() => {
    // A locked store is not read (the home page then shows no figures; the field pages open it first).
    if (!user.value || !isOpen(user.value.id)) return
    const db = fieldDb(user.value.id)
    subscriptions.push(liveQuery(() => db.setup()).subscribe((s) => {
      setup.value = s
    }))
    subscriptions.push(liveQuery(() => db.visits.orderBy('updatedAt').reverse().toArray()).subscribe((v) => {
      visits.value = v
      loaded.value = true
    }))
    subscriptions.push(liveQuery(async () => (await db.photos.toArray()).map(({ blob: _blob, ...rest }) => rest)).subscribe((p) => {
      photos.value = p
    }))
  })
  onBeforeUnmount(() => subscriptions.forEach(s => s.unsubscribe()))

  const counts = computed(() => {
    const of = (states: string[]) => visits.value.filter(v => states.includes(v.state)).length
    return {
      recorded: visits.value.filter(v => v.state !== 'draft').length,
      drafts: of(['draft']),
      waiting: of(['queued']),
      synced: of(['synced']),
      sentBack: of(['sent_back']),
      attention: of(['conflict', 'rejected']),
      photosWaiting: photos.value.filter(p => p.state === 'waiting').length
    }
  })

  function countsFor(roundId: number, villageId: number) {
    const mine = visits.value.filter(v => v.roundId === roundId && v.villageId === villageId && v.state !== 'draft')
    return { recorded: mine.length, waiting: mine.filter(v => v.state === 'queued').length, synced: mine.filter(v => v.state === 'synced').length, sentBack: mine.filter(v => v.state === 'sent_back').length }
  }

  return { setup, visits, photos, counts, countsFor, loaded }
}
