/** The id of the builder's input for one translated text, from its place in the definition (`translations.sw.key.label`). */
export function translationInputId(path: ReadonlyArray<string | number>): string {
  return `tr-${path.join('-')}`
}
