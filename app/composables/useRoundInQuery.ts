/** The survey round a page shows, kept in the URL (?round=) so a view can be bookmarked or shared. */
export function useRoundInQuery(fallback: () => number | null | undefined) {
  const route = useRoute()
  const router = useRouter()
  return computed<number | null>({
    get: () => Number(route.query.round) || fallback() || null,
    set: id => router.replace({ query: { ...route.query, round: String(id) } })
  })
}
