// What the home pages show: a few real figures per role, each linking to the page that has the detail.

export interface CoordinatorHome {
  rounds: Array<{ id: number, name: string, technology: string, season: string, status: 'draft' | 'open' | 'closed', visits: number, toReview: number, accepted: number, sentBack: number }>
  recentFits: Array<{ id: number, roundId: number, round: string, link: string, status: 'running' | 'done' | 'failed', used: number | null, covariates: number, createdAt: string, published: boolean }>
  published: Array<{ roundId: number, round: string, modelRunId: number, publishedAt: string, estimate: number, villages: number, tabletAid: boolean }>
}

export interface FunderHome {
  /** The funder organisation the signed-in funder belongs to (by e-mail domain), or null when it is not listed. */
  funderOrganisation: string | null
  rounds: Array<{ roundId: number, round: string, technology: string, season: string, publishedAt: string, farmsVisited: number, villages: number, predicted: number | null, ciLow: number | null, ciHigh: number | null, observedRate: number | null, targetRate: number, villagesBelowTarget: number }>
}

export interface AdminHome {
  people: Array<{ role: string, active: number, inactive: number }>
  invitationsOpen: number
  funderOrganisations: number
  recentActivity: Array<{ id: number, action: string, actor: string | null, at: string }>
}
