import type { Page } from '#shared/types/listing'

/**
 * A server-paginated list whose filters live in the URL, so a filtered view can be bookmarked or shared.
 * `defaults` fill filters the URL does not name; they must be known before the first fetch, so that the server's
 * render and the browser's first render read the same list (setting a filter afterwards renders one list on the
 * server and hydrates another).
 */
export function usePagedList<T>(url: string, filterKeys: readonly string[], defaults: Record<string, string> = {}) {
  const route = useRoute()
  const router = useRouter()
  const filters = reactive(Object.fromEntries(filterKeys.map(key => [key, String(route.query[key] ?? defaults[key] ?? '')])))
  const page = ref(Number(route.query.page ?? 1) || 1)

  const query = computed(() => {
    const q: Record<string, string | number> = { page: page.value }
    for (const key of filterKeys) if (filters[key]) q[key] = filters[key]
    return q
  })

  const { data, error, status, refresh } = useFetch<Page<T>>(url, { query })
  watch(query, q => router.replace({ query: Object.fromEntries(Object.entries(q).map(([k, v]) => [k, String(v)])) }))
  watch(() => ({ ...filters }), () => {
    page.value = 1
  })

  const pageCount = computed(() => data.value ? Math.max(1, Math.ceil(data.value.total / data.value.pageSize)) : 1)
  return { filters, page, pageCount, data, error, status, refresh }
}
