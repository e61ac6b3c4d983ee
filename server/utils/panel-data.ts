import type { ModelSpec } from '#shared/utils/stats'
import type { SeveralRounds } from '#shared/utils/schemas/panel'
import type { PanelRound } from './round-family'

// Several rounds in one model (the builder's "several rounds together"). The loader (model-data.ts) adds two
// columns to the data: the round of each visit (its label "1. name", so the rounds sort in order) and its registered
// farm. Names start with "_" so no question key (always a letter first) can take them.
export const ROUND_COLUMN = '_round'
export const FARM_COLUMN = '_farm'

/** What the loader needs to read several rounds. */
export interface PanelRead {
  rounds: PanelRound[]
}

/**
 * The engine specification for several rounds: round effects always, the farm for the adoption/dis-adoption table,
 * and for 'farm-effects' a farm random intercept with the farm means of time-varying covariates (the engine's
 * correlated random effects: `villageTreatment: 'random-intercept'` with `panelId` makes the farm the group).
 */
export function severalRoundsSpec(spec: ModelSpec, several: SeveralRounds): ModelSpec {
  const withRounds: ModelSpec = { ...spec, rounds: ROUND_COLUMN, panelId: FARM_COLUMN }
  if (several.model === 'pooled') return withRounds
  return { ...withRounds, villageTreatment: 'random-intercept', se: undefined }
}
