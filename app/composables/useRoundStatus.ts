import type { RoundDetail } from '#shared/types/field'
import type { ConfirmRequest } from './useConfirm'

/** Opening, closing and reopening a round, each asked first with what it does and how to undo it. */
export function useRoundStatus(round: () => RoundDetail | null | undefined, refresh: () => Promise<unknown>) {
  const { ask } = useConfirm()
  const { busy, message, run } = useApiAction()
  const notice = ref('')

  function questionFor(r: RoundDetail, status: 'open' | 'closed'): ConfirmRequest {
    if (status === 'closed') {
      return {
        title: `Close ${r.name}?`,
        points: [
          'Tablets stop recording: no new visits for this round, and visits not yet sent stay on the tablets, unsent.',
          'Visits sent back to enumerators can no longer be fixed on the tablets.',
          `The ${r.visitCount} visits received stay here for review, models and publication.`,
          'You can undo this: reopen the round and tablets can record and fix visits again.'
        ],
        confirmLabel: 'Close the round',
        tone: 'danger'
      }
    }
    if (r.status === 'closed') {
      return {
        title: `Reopen ${r.name}?`,
        points: [
          'Enumerators assigned to its villages can record visits again after their next sync.',
          'Visits sent back can be fixed and sent again; visits kept on tablets can be sent.',
          'You can close the round again at any time.'
        ],
        confirmLabel: 'Reopen the round'
      }
    }
    return {
      title: `Open ${r.name}?`,
      points: [
        `The questionnaire is frozen as version ${r.questionnaire?.number ?? 1}: later edits make a new version, and each visit keeps the version it was answered with.`,
        'Enumerators assigned to its villages can record visits on their tablets after their next sync.',
        'You can close the round later, and reopen it after closing.'
      ],
      confirmLabel: 'Open the round'
    }
  }

  async function setStatus(status: 'open' | 'closed') {
    const r = round()
    if (!r) return
    notice.value = ''
    const reopening = r.status === 'closed'
    if (!await ask(questionFor(r, status))) return
    if (await run(() => $fetch(`/api/rounds/${r.id}`, { method: 'PATCH', body: { status } }))) {
      notice.value = status === 'closed'
        ? `${r.name} is closed. Tablets stop recording at their next sync. Reopen it to undo.`
        : reopening ? `${r.name} is open again.` : `${r.name} is open. Tablets get it at their next sync.`
      await refresh()
    }
  }

  return { busy, message, notice, setStatus }
}
