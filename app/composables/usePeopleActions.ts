import type { PersonRow } from '#shared/types/listing'
import type { InvitationAnswer } from '#shared/types/team'
import type { Role } from '#shared/utils/roles'

/** What an admin does to people: invite, invite again, change a role, deactivate and reactivate, sign out everywhere. */
export function usePeopleActions(refresh: () => Promise<unknown>) {
  const notice = ref('')
  const actionError = ref('')
  const busyId = ref<number | 'invite' | null>(null)

  async function run<T>(key: number | 'invite', action: () => Promise<T>, done: (result: T) => string): Promise<T | undefined> {
    notice.value = ''
    actionError.value = ''
    busyId.value = key
    try {
      const result = await action()
      notice.value = done(result)
      await refresh()
      return result
    }
    catch (error) {
      actionError.value = problemOf(error).message
      throw error
    }
    finally {
      busyId.value = null
    }
  }

  const invite = (input: { email: string, role: Role, name?: string }) => run('invite',
    () => $fetch<InvitationAnswer>('/api/people/invitations', { method: 'POST', body: input }),
    answer => answer.reinvited
      ? `A new invitation is on its way to ${answer.email}; the earlier link no longer works.`
      : `Invitation on its way to ${answer.email}.`)

  const reinvite = (row: PersonRow) => run(row.id,
    () => $fetch<InvitationAnswer>('/api/people/invitations', { method: 'POST', body: { email: row.email, role: row.role, name: row.name } }),
    answer => `A new invitation is on its way to ${answer.email}; the earlier link no longer works.`).catch(() => undefined)

  const update = (row: PersonRow, body: { role?: Role, active?: boolean }, done: string) => run(row.id,
    () => $fetch(`/api/people/${row.id}`, { method: 'PATCH', body }),
    () => done).catch(() => refresh())

  const { ask } = useConfirm()

  async function setRole(row: PersonRow, role: Role) {
    if (role === row.role) return
    const ok = await ask({
      title: `Make ${row.name} ${ROLE_LABELS[role].toLowerCase()}?`,
      points: [
        `${row.name} is ${ROLE_LABELS[row.role].toLowerCase()} today and will be ${ROLE_LABELS[role].toLowerCase()} from their next step in Furrowcast.`,
        `They see the pages of a ${ROLE_LABELS[role].toLowerCase()} and lose those of a ${ROLE_LABELS[row.role].toLowerCase()}.`,
        'You can change the role back here at any time; the change is written to the audit log.'
      ],
      confirmLabel: `Make ${ROLE_LABELS[role].toLowerCase()}`
    })
    if (ok) await update(row, { role }, `${row.name} is now ${ROLE_LABELS[role].toLowerCase()}.`)
  }

  async function setActive(row: PersonRow, active: boolean) {
    // Reactivating gives access back and takes nothing away: no question asked.
    if (!active && !await ask({
      title: `Deactivate ${row.name}?`,
      points: [
        `${row.name} loses access at their next step in Furrowcast and can no longer sign in.`,
        'Their visits, fits and audit entries stay as they are.',
        'You can reactivate them here later.'
      ],
      confirmLabel: 'Deactivate',
      tone: 'danger'
    })) return
    await update(row, { active }, `${row.name} is ${active ? 'active again' : 'deactivated'}.`)
  }

  const endSessions = (row: PersonRow) => run(row.id,
    () => $fetch<{ ended: number }>(`/api/people/${row.id}/sessions`, { method: 'DELETE' }),
    answer => `${row.name} is signed out everywhere (${answer.ended} session${answer.ended === 1 ? '' : 's'} ended).`).catch(() => undefined)

  return { notice, actionError, busyId, invite, reinvite, setRole, setActive, endSessions }
}
