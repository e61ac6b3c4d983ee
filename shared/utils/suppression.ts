// Which villages funders may see, and the round figures they may see with them. A village with fewer visits than
// the organisation's minimum is hidden (primary suppression). Two more rules keep a hidden village from being
// worked out by subtraction:
//  1. Complementary suppression: when villages are hidden, the hidden group must hold at least two villages and,
//     together, at least the minimum number of visits; the smallest shown villages (fewest visits, then code) are
//     hidden with it until it does, or until every village is hidden. Even someone who knows the true round totals
//     from elsewhere (a programme report) then learns only a group figure that is itself above the minimum.
//  2. Every round figure a funder sees (farms visited, observed and predicted adoption, each scenario's change, the
//     previous round's figure) is computed from the shown villages only, as their visit-weighted mean. A hidden
//     village's figures enter no number a funder receives, so no subtraction (round totals minus shown villages,
//     scenarios, other publications) can recover them; the confidence interval of the full-round estimate is
//     left out when villages are hidden, since its midpoint would give the full-round figure back.
// The rule is applied when a funder reads, so a new minimum in the settings takes effect on every publication at once.

export interface VillageCount { village: string, n: number }

/** The codes of the villages to hide from funders: primary (n below the minimum) plus complementary ones. */
export function hiddenVillages(villages: readonly VillageCount[], minVisits: number): Set<string> {
  const hidden = new Set(villages.filter(v => v.n < minVisits).map(v => v.village))
  if (!hidden.size) return hidden
  const shown = villages.filter(v => !hidden.has(v.village))
    .sort((a, b) => a.n - b.n || (a.village < b.village ? -1 : a.village > b.village ? 1 : 0))
  const hiddenVisits = () => villages.filter(v => hidden.has(v.village)).reduce((s, v) => s + v.n, 0)
  while (shown.length && (hidden.size < 2 || hiddenVisits() < minVisits)) hidden.add(shown.shift()!.village)
  return hidden
}

export interface ShownFigure { n: number, value: number }

/** The visit-weighted mean of the shown villages' figures, or null when no village is shown. */
export function shownMean(figures: readonly ShownFigure[]): number | null {
  const visits = figures.reduce((s, f) => s + f.n, 0)
  return visits > 0 ? figures.reduce((s, f) => s + f.n * f.value, 0) / visits : null
}
