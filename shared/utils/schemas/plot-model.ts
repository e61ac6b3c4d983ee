import { z } from 'zod'

// A model from a repeated group's rows (e.g. plots): at plot level (one row per plot, the outcome a yes/no question of
// the group, covariates from the plot and from its farm, standard errors clustered by farm or by village), or at farm
// level (the farm's adoption answer, with terms worked out from its plots).

const key = z.string().regex(/^[a-z][a-z0-9_]{0,39}$/, 'Choose a question')

export const PLOT_TERM_KINDS = ['share_rows', 'share_area', 'any'] as const
export type PlotTermKind = typeof PLOT_TERM_KINDS[number]

export const PLOT_TERM_WORDS: Record<PlotTermKind, string> = {
  share_rows: 'share of the plots with it',
  share_area: 'share of the area under it',
  any: 'on any plot'
}

export const plotTermSchema = z.object({
  kind: z.enum(PLOT_TERM_KINDS),
  /** A yes/no question of the group (e.g. "was the seed sown on this plot?"). */
  question: key,
  /** With share_area: the group's number question giving each row's area. */
  area: key.optional()
}).refine(t => t.kind !== 'share_area' || !!t.area, { path: ['area'], message: 'Choose the question that gives each plot\'s area' })
export type PlotTerm = z.infer<typeof plotTermSchema>

export const plotModelRequestSchema = z.object({
  roundId: z.number().int().positive(),
  group: key,
  level: z.enum(['plot', 'farm']),
  link: z.enum(['probit', 'logit']).default('probit'),
  /** Plot level: the group's yes/no question that is the outcome of each row. */
  outcome: key.optional(),
  /** Plot level: questions of the group (numbers, yes/no, one of a list). */
  rowCovariates: z.array(key).max(20).default([]),
  /** Questions asked once per farm (numbers, yes/no, one of a list), in both levels. */
  farmCovariates: z.array(key).max(30).default([]),
  /** Farm level: terms worked out from the rows. */
  rowTerms: z.array(plotTermSchema).max(10).default([]),
  /** Standard errors clustered by farm (plot level: a farm's plots are not independent; farm level: each farm alone,
   *  i.e. robust) or by village. */
  cluster: z.enum(['farm', 'village']).default('village')
}).superRefine((r, ctx) => {
  if (r.level === 'plot' && !r.outcome) ctx.addIssue({ code: 'custom', path: ['outcome'], message: 'Choose the yes/no question of each row that the model explains' })
  if (r.level === 'farm' && !r.rowTerms.length && !r.farmCovariates.length) ctx.addIssue({ code: 'custom', path: ['rowTerms'], message: 'Choose at least one term' })
})
export type PlotModelRequest = z.infer<typeof plotModelRequestSchema>

/** The column name a farm-level term gets in the data and the results (group keys hold no colon). */
export function plotTermColumn(t: PlotTerm): string {
  return t.kind === 'share_area' ? `${t.question}:share_area` : `${t.question}:${t.kind}`
}
