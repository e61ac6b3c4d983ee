// The questionnaire language this tablet shows, chosen by the enumerator and remembered on the device (not per
// person or visit: whoever picks the tablet up next interviews in the same language until they switch). Shared by
// the picker and the form through useState, so a switch re-renders the open visit at once, offline.
const STORAGE_KEY = 'furrowcast-field-language'

function remembered(): string | null {
  try {
    return import.meta.client ? localStorage.getItem(STORAGE_KEY) : null
  }
  catch {
    return null
  }
}

export function useFieldLanguage() {
  const chosen = useState<string | null>('field-language', remembered)
  function choose(code: string) {
    chosen.value = code
    try {
      localStorage.setItem(STORAGE_KEY, code)
    }
    catch {
      // A private window may refuse storage: the choice then holds until the page is closed.
    }
  }
  return { chosen, choose }
}
