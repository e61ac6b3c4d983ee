/**
 * False while the page is server-rendered HTML only, true once Vue runs in the browser. Inputs stay disabled
 * until then: on a slow tablet, text typed into the not-yet-live form would be wiped when Vue takes over.
 */
export function useHydrated() {
  const hydrated = ref(false)
  onMounted(() => {
    hydrated.value = true
  })
  return hydrated
}
