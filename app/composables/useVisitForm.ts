import type { FieldSetup } from '#shared/types/field'
import type { QuestionnaireVersionDto } from '#shared/utils/schemas/questionnaire'
import { type LocalVisit, fieldDb } from '~/utils/field-db'
import { resizePhoto, sha256Hex } from '~/utils/photo-resize'
import { payloadOf } from '~/utils/sync-engine'

const EDITABLE = ['draft', 'queued', 'rejected', 'sent_back', 'conflict']

/**
 * One visit being written on the tablet. Every change is saved to the device as it is typed (a draft);
 * "Save visit" checks it with the questionnaire version's own schema and queues it for sync.
 * `setupOf` gives the tablet's setup as the page already read it (reading and unsealing it again cost the form's
 * first screen a store read and a decryption).
 */
export function useVisitForm(setupOf: () => FieldSetup | null) {
  const route = useRoute()
  const router = useRouter()
  const { user } = useUserSession()
  const sync = useFieldSyncStore()
  const visit = ref<LocalVisit | null>(null)
  const version = ref<QuestionnaireVersionDto | null>(null)
  const errors = ref<FieldErrors>({})
  const notFound = ref(false)
  const saving = ref(false)
  /** The visit's round was closed on the server: the visit stays readable here but nothing can change or be sent. */
  const roundClosed = ref(false)
  const readOnly = computed(() => !visit.value || roundClosed.value || !EDITABLE.includes(visit.value.state))
  let db: ReturnType<typeof fieldDb>
  let saveTimer: ReturnType<typeof setTimeout> | undefined
  /** Typed but not yet written to the device. */
  let dirty = false
  /** Whether the visit is on the device yet (a new visit is not, until something is entered). */
  const stored = ref(true)
  /** Shown after a successful save, in place of the form: the confirmation and, if switched on, the planning aid. */
  const justSaved = ref(false)

  async function load() {
    if (!user.value) return
    db = fieldDb(user.value.id)
    let setup = setupOf()
    const id = typeof route.query.id === 'string' ? route.query.id : null
    if (!id) {
      const round = setup?.rounds.find(r => r.id === Number(route.query.round) && r.status !== 'closed')
      if (!round) {
        notFound.value = true
        return
      }
      // A new visit lives in memory only: it becomes a draft on the tablet with the first thing entered.
      const village = Number(route.query.village)
      const now = new Date().toISOString()
      stored.value = false
      version.value = setup?.questionnaires.find(q => q.id === round.currentVersionId) ?? null
      visit.value = {
        id: crypto.randomUUID(), roundId: round.id, villageId: round.villageIds.includes(village) ? village : null, questionnaireVersionId: round.currentVersionId,
        // Started from the sample list ("Start visit" on a listed farm): its code is filled in.
        farmCode: typeof route.query.farm === 'string' ? route.query.farm.slice(0, 40) : '', location: null, answers: {}, consent: false, consentAt: null, startedAt: now, savedAt: null, baseVersion: 0,
        state: 'draft', reviewState: null, reviewReason: null, errors: null, serverCopy: null, updatedAt: now, syncedAt: null
      }
      if (!version.value) notFound.value = true
      return
    }
    const found = await db.visits.get(id)
    // A sync since the page opened may have brought the version (a server copy taken after a conflict).
    const versionIn = (s: FieldSetup | null) => s?.questionnaires.find(q => q.id === found?.questionnaireVersionId) ?? null
    if (found && !versionIn(setup)) setup = await db.setup()
    version.value = versionIn(setup)
    if (!found || !version.value) {
      notFound.value = true
      return
    }
    stored.value = true
    roundClosed.value = setup?.rounds.find(r => r.id === found.roundId)?.status === 'closed'
    visit.value = found
    errors.value = found.errors ?? {}
  }

  // A question whose condition stops holding is hidden and its answer dropped: the visit then records it as not asked
  // (the schema, here and on the server, refuses an answer to a hidden question).
  // A plain copy: it reads every key of the reactive answers, so the condition follows answers added later too.
  const asking = computed(() => version.value && visit.value ? askedQuestions(version.value.definition.questions, { ...visit.value.answers }) : null)
  watch(() => asking.value?.notAsked.join(','), () => {
    if (!visit.value || !version.value || readOnly.value) return
    const { answers, removed } = withoutNotAsked(version.value.definition.questions, visit.value.answers)
    if (removed.length) visit.value.answers = answers
  })

  // Drafts save themselves: a short pause after the last change writes the whole form to the device.
  const typed = computed(() => {
    const v = visit.value
    return v ? JSON.stringify([v.farmCode, v.villageId, v.location, v.answers, v.consent, v.consentAt]) : null
  })
  watch(typed, (now, before) => {
    if (now === null || before === null || before === undefined || readOnly.value) return
    dirty = true
    clearTimeout(saveTimer)
    saveTimer = setTimeout(() => void persist(), 300)
  })

  async function persist(extra: Partial<LocalVisit> = {}) {
    if (!visit.value) return
    dirty = false
    const v = visit.value
    // An edit of a queued visit takes it out of the queue until it is saved again.
    const state = extra.state ?? (v.state === 'queued' ? 'draft' : v.state)
    const plain = JSON.parse(JSON.stringify({ ...v, ...extra, state, updatedAt: new Date().toISOString() })) as LocalVisit
    await db.visits.put(plain)
    v.state = plain.state
    v.updatedAt = plain.updatedAt
    if (!stored.value) {
      stored.value = true
      // From now on the address names the draft, so a reload or the back button finds it again.
      await router.replace({ query: { id: v.id } })
    }
  }

  function setConsent(given: boolean) {
    if (!visit.value) return
    visit.value.consent = given
    visit.value.consentAt = given ? new Date().toISOString() : null
  }

  async function addPhotos(files: FileList | File[]) {
    if (!visit.value) return
    if (!stored.value) await persist()
    for (const file of Array.from(files)) {
      const blob = await resizePhoto(file)
      await db.photos.add({ id: crypto.randomUUID(), visitId: visit.value.id, blob, contentType: 'image/jpeg', size: blob.size, sha256: await sha256Hex(blob), state: 'waiting', createdAt: new Date().toISOString() })
    }
  }

  async function removePhoto(id: string) {
    await db.photos.where({ id, state: 'waiting' }).delete()
  }

  /** Checks the visit with the same schema the server uses; queues it only if it passes. */
  async function save(shownVersion?: QuestionnaireVersionDto | null): Promise<boolean> {
    if (!visit.value || !version.value) return false
    clearTimeout(saveTimer)
    dirty = false
    const savedAt = new Date().toISOString()
    const candidate = { ...payloadOf(visit.value), savedAt }
    // The version in the language on screen (same codes, so the same verdict): its messages are the ones shown.
    const parsed = visitSchemaFor(shownVersion ?? version.value).safeParse(candidate)
    errors.value = parsed.success ? {} : fieldErrorsOf(parsed.error)
    if (!parsed.success) {
      // An untouched new visit stays off the tablet even when "Save" is pressed on the empty form.
      if (stored.value) await persist()
      return false
    }
    saving.value = true
    try {
      await persist({ state: 'queued', savedAt, errors: null, serverCopy: null })
      justSaved.value = true
      void sync.syncNow()
      return true
    }
    finally {
      saving.value = false
    }
  }

  /** On a conflict: take the server's copy (it won) and drop the device's edit. */
  async function keepServerCopy() {
    // A plain copy: IndexedDB cannot store Vue's reactive proxies.
    const server = visit.value?.serverCopy ? JSON.parse(JSON.stringify(visit.value.serverCopy)) as NonNullable<LocalVisit['serverCopy']> : null
    if (!visit.value || !server) return
    await db.visits.update(visit.value.id, { answers: server.answers, farmCode: server.farmCode, baseVersion: server.version, state: server.reviewState === 'sent_back' ? 'sent_back' : 'synced', reviewState: server.reviewState, reviewReason: server.reviewReason, serverCopy: null, errors: null, updatedAt: new Date().toISOString() })
    await load()
  }

  /** On a conflict: resend the device's answers on top of the server's version (a new edit of it). */
  async function resendOnTop() {
    const server = visit.value?.serverCopy
    if (!visit.value || !server) return
    visit.value.baseVersion = server.version
    visit.value.state = 'draft'
    await save()
  }

  /** Only a draft the server has never seen can be thrown away; its photos go with it. */
  const discardable = computed(() => stored.value && visit.value?.state === 'draft' && visit.value.baseVersion === 0 && !visit.value.syncedAt && visit.value.savedAt === null)
  async function discard() {
    if (!visit.value || !discardable.value) return
    clearTimeout(saveTimer)
    dirty = false
    const id = visit.value.id
    await db.transaction('rw', db.visits, db.photos, async () => {
      await db.photos.where({ visitId: id }).delete()
      await db.visits.delete(id)
    })
    stored.value = false
  }

  onMounted(load)
  onBeforeUnmount(() => {
    clearTimeout(saveTimer)
    if (dirty) void persist()
  })

  return { visit, version, asking, errors, notFound, saving, readOnly, roundClosed, justSaved, stored, discardable, setConsent, addPhotos, removePhoto, save, discard, keepServerCopy, resendOnTop }
}
