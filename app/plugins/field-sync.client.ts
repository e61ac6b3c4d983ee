// Starts the tablet's sync loop for a signed-in enumerator, on every page, from app start.
export default defineNuxtPlugin({
  name: 'furrowcast:field-sync',
  dependsOn: ['furrowcast:offline-session'],
  setup() {
    const { user } = useUserSession()
    const sync = useFieldSyncStore()
    watch(user, (u) => {
      if (u?.role === 'enumerator') void sync.start(u.id)
      else sync.stop()
    }, { immediate: true })
  }
})
