/** What a confirmation says: the action in its title, what will happen as plain points, and the button's words. */
export interface ConfirmRequest {
  title: string
  /** What happens, one consequence per line; and how to undo it, if it can be undone. */
  points: string[]
  confirmLabel: string
  cancelLabel?: string
  /** 'danger' for actions that take something away (deactivation, closing). */
  tone?: 'danger' | 'normal'
}

interface Pending extends ConfirmRequest { resolve: (ok: boolean) => void }

// One dialog for the whole app (UiConfirmDialog in the layout). The state lives in the browser only: a confirmation
// answers a click, so the server never holds one and requests never share it.
const pending = shallowRef<Pending | null>(null)

/**
 * Asks before a consequential action (role change, deactivation, opening or closing a round).
 * Resolves true when confirmed, false when cancelled (button, Escape). Never use it for harmless actions.
 */
export function useConfirm() {
  function ask(request: ConfirmRequest): Promise<boolean> {
    if (import.meta.server) return Promise.resolve(false)
    pending.value?.resolve(false)
    return new Promise(resolve => pending.value = { ...request, resolve })
  }
  function answer(ok: boolean) {
    const current = pending.value
    pending.value = null
    current?.resolve(ok)
  }
  return { ask, answer, pending: readonly(pending) }
}
