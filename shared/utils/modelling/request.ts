import { z } from 'zod'
import { safeText } from '../schemas/safe-text'
import { severalRoundsSchema } from '../schemas/panel'

const key = z.string().regex(/^[a-z][a-z0-9_]{0,39}$/, 'Unknown question key')
/** A question's key, or question.option for one option of a several-answer question (one yes/no term). */
/**
 * The builder's choice "weights from the sample lists": each visit of a listed farm weighs 1 / (P(village) · n_v / N_v)
 * (shared/utils/sampling/weights.ts). Not a question key (keys hold no hyphen), so it never meets one; the same name
 * is the weight column the server loads for the engine.
 */
export const SAMPLE_LIST_WEIGHTS = 'sample-lists'

/** The longest a GET of a run still fitting waits for its end (`?wait=` in ms) before answering as it stands. */
export const RUN_WAIT_MAX_MS = 20_000
export const runQuerySchema = z.object({ wait: z.coerce.number().int().min(0).max(RUN_WAIT_MAX_MS).optional() })
const termKey = z.string().regex(/^[a-z][a-z0-9_]{0,39}(\.[a-z0-9_]{1,40})?$/, 'Unknown question key')

export const covariateChoiceSchema = z.object({
  key: termKey,
  /** Questions asked under a condition: farms not asked count as 0 (their own group for a choice), or are left out. */
  notAsked: z.enum(['zero', 'asked-only']).optional(),
  transform: z.enum(['log', 'centre']).optional(),
  square: z.boolean().optional(),
  /** Choice questions: the option the others are compared with. */
  reference: safeText(z.string().max(40)).optional()
})
export type CovariateChoice = z.infer<typeof covariateChoiceSchema>

export const LINK_CHOICES = ['probit', 'logit', 'cloglog', 'cauchit'] as const
export const SE_CHOICES = ['cluster', 'conventional', 'hc1'] as const

export const LINK_LABELS: Record<typeof LINK_CHOICES[number], string> = {
  probit: 'Probit (normal)',
  logit: 'Logit (logistic)',
  cloglog: 'Lopsided curve (complementary log-log)',
  // Our plain name first: the curve's tails are heavy, so a few extreme farms move it less.
  cauchit: 'Heavy-tailed curve (cauchit)'
}

export const SE_LABELS: Record<typeof SE_CHOICES[number], string> = {
  cluster: 'Clustered by village (recommended: villages were sampled)',
  conventional: 'Conventional',
  hc1: 'Robust to heteroskedasticity (HC1)'
}

export const VILLAGE_CHOICES = ['cluster', 'random-intercept', 'survey'] as const

/** How villages enter the model, with the one-sentence explanation the builder shows. */
export const VILLAGE_LABELS: Record<typeof VILLAGE_CHOICES[number], { label: string, explain: string }> = {
  'cluster': {
    label: 'Allow for villages in the standard errors',
    explain: 'One model for all farms; standard errors allow farms in the same village to be alike (the usual choice).'
  },
  'random-intercept': {
    label: 'Give each village its own adoption level',
    explain: 'Adds a village random effect: shows how much adoption differs between villages beyond the farm characteristics, and predicts each village from its own farms and the others (probit or logit only).'
  },
  'survey': {
    label: 'Follow the sampling plan',
    explain: 'Villages as the sampled units and the sampling weights from the sample lists or a number question: results describe the whole population the sample was drawn from.'
  }
}

/** Fewer villages than this make village-level statistics unreliable; the builder warns (common practice). */
export const FEW_VILLAGES = 20

/** Checks run with the fit: the link test, and the heteroskedasticity test against these characteristics. */
export const checksChoiceSchema = z.object({
  linkTest: z.boolean().default(false),
  /** Numbers or yes/no questions of the model that may change the spread of the unobserved part (probit only). */
  hetero: z.array(key).max(5).default([])
})

/** What a coordinator chooses in the model builder; the server turns it into an engine specification. */
export const modelRequestSchema = z.object({
  roundId: z.coerce.number().int().positive(),
  covariates: z.array(covariateChoiceSchema).min(1, 'Choose at least one farm characteristic').max(30),
  interactions: z.array(z.tuple([termKey, termKey])).max(10).default([]),
  link: z.enum(LINK_CHOICES).default('probit'),
  se: z.enum(SE_CHOICES).default('cluster'),
  weights: z.union([key, z.literal(SAMPLE_LIST_WEIGHTS)]).optional(),
  margins: z.enum(['ame', 'mem']).default('ame'),
  villages: z.enum(VILLAGE_CHOICES).default('cluster'),
  checks: checksChoiceSchema.default({ linkTest: false, hetero: [] }),
  /** Several rounds together (the request's round and these); absent: this round alone. */
  several: severalRoundsSchema.optional()
}).superRefine((request, ctx) => {
  if (request.several) severalRoundsProblems(request, ctx)
  if (request.villages === 'survey' && !request.weights) ctx.addIssue({ code: 'custom', path: ['weights'], message: 'The sampling plan needs the sampling weights: from the sample lists or a question' })
  if (request.villages === 'random-intercept' && request.link !== 'probit' && request.link !== 'logit') {
    ctx.addIssue({ code: 'custom', path: ['link'], message: 'Village adoption levels are available with the probit or logit only' })
  }
  const keys = request.covariates.map(c => c.key)
  if (new Set(keys).size !== keys.length) ctx.addIssue({ code: 'custom', path: ['covariates'], message: 'A characteristic is chosen twice' })
  if (request.checks.hetero.length && request.link !== 'probit') {
    ctx.addIssue({ code: 'custom', path: ['checks', 'hetero'], message: 'The test of an uneven spread is available with the probit only' })
  }
  request.checks.hetero.forEach((k, i) => {
    if (!keys.includes(k)) ctx.addIssue({ code: 'custom', path: ['checks', 'hetero', i], message: 'The test of an uneven spread uses characteristics that are in the model' })
  })
  request.interactions.forEach(([a, b], i) => {
    if (a === b) ctx.addIssue({ code: 'custom', path: ['interactions', i], message: 'An interaction needs two different characteristics' })
    if (!keys.includes(a) || !keys.includes(b)) ctx.addIssue({ code: 'custom', path: ['interactions', i], message: 'Both parts of an interaction must be in the model' })
  })
})
export type ModelRequest = z.infer<typeof modelRequestSchema>

function severalRoundsProblems(request: { roundId: number, link: string, villages: string, several?: { roundIds: number[], model: string } }, ctx: z.RefinementCtx) {
  const several = request.several!
  if (several.roundIds.includes(request.roundId) || new Set(several.roundIds).size !== several.roundIds.length) {
    ctx.addIssue({ code: 'custom', path: ['several', 'roundIds'], message: 'Choose each other round once' })
  }
  if (request.villages !== 'cluster') ctx.addIssue({ code: 'custom', path: ['villages'], message: 'Several rounds together allow for villages in the standard errors only' })
  if (several.model === 'farm-effects' && request.link !== 'probit' && request.link !== 'logit') {
    ctx.addIssue({ code: 'custom', path: ['link'], message: 'Following each farm is available with the probit or logit only' })
  }
}
export type ModelRequestInput = z.input<typeof modelRequestSchema>

/** A counterfactual the coordinator asks for: set a characteristic for everyone, or shift it, maybe in some villages. */
export const scenarioRequestSchema = z.object({
  name: safeText(z.string().trim().min(1, 'Name the scenario').max(80)),
  covariate: termKey,
  set: z.union([z.number().finite(), safeText(z.string().max(40)), z.boolean()]).optional(),
  shift: z.number().finite().optional(),
  villages: z.array(safeText(z.string().max(40))).max(500).optional()
}).refine(s => (s.set === undefined) !== (s.shift === undefined), { message: 'Give either a value to set or an amount to shift, not both', path: ['set'] })
export type ScenarioRequest = z.infer<typeof scenarioRequestSchema>

export const scenariosRequestSchema = z.object({ scenarios: z.array(scenarioRequestSchema).min(1).max(10) })

export const publishRequestSchema = z.object({
  note: safeText(z.string().trim().min(3, 'Write a short note for the readers').max(500), { multiline: true }),
  /** Villages predicted below this share are flagged to funders (0–1). */
  targetRate: z.number().min(0).max(1).default(0.3),
  /** Show the farm-level planning aid on enumerators' tablets for this round. Off by default. */
  tabletAid: z.boolean().default(false),
  /** The scenarios funders may see, by name; the others stay the coordinator's own explorations. */
  scenarioNames: z.array(z.string().max(200)).max(100).default([]),
  /** Visits wanted per village, kept on the round; villages below it are marked. Null: no target. */
  targetVisitsPerVillage: z.number().int().min(1, 'The target is at least 1 visit').max(10_000).nullable().default(null)
})
export type PublishRequest = z.infer<typeof publishRequestSchema>

/** What the publish preview needs: the choices that change what funders will see. */
export const publishPreviewSchema = publishRequestSchema.pick({ targetRate: true, scenarioNames: true, targetVisitsPerVillage: true })
