// The cautions shown beside every model result and written into every export.
export const MODEL_CAUTIONS: readonly string[] = [
  'These are associations in observational survey data, not causal effects: a characteristic that goes with adoption need not cause it.',
  'Predicted probabilities are for planning and targeting extension effort, never for deciding any individual household\'s eligibility for support.',
  'Farmers\' personal data is protected under the local data-protection law; share village-level results only.'
]
