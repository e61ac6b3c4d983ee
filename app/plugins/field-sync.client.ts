import { sweepRevokedStores } from '~/utils/field-vault'

// Starts the tablet's sync loop for a signed-in enumerator, on every page, from app start.
export default defineNuxtPlugin({
  name: 'furrowcast:field-sync',
  dependsOn: ['furrowcast:offline-session'],
  setup() {
    const { user } = useUserSession()
    const sync = useFieldSyncStore()
    const vault = useFieldVaultStore()
    // A revoked tablet erases its stores at its first contact, before anyone signs in (its sessions have ended).
    const sweep = () => void sweepRevokedStores().then((erased) => {
      if (user.value && erased.includes(user.value.id)) vault.refresh(user.value.id)
    })
    sweep()
    window.addEventListener('online', sweep)
    watch(user, (u) => {
      vault.refresh(u?.role === 'enumerator' ? u.id : null)
      if (u?.role === 'enumerator') void sync.start(u.id)
      else sync.stop()
    }, { immediate: true })
  }
})
