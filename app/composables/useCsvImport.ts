import type { Question } from '#shared/utils/schemas/questionnaire'
import { CsvFileError, parseCsv, separatorName } from '#shared/utils/imports/csv-rows'
import type { ImportModeValue, ImportOutcome, ImportPreview, ImportRequestInput } from '#shared/utils/schemas/csv-import'

/**
 * The state of one CSV import into a round, shared by its steps: the file, the column matching, the check and
 * the import. A changed matching makes the last check stale, so the rows must be checked again before importing.
 */
export function useCsvImport(roundId: () => number, questions: () => Question[]) {
  const fileName = ref('')
  const csv = ref('')
  const columns = ref<string[]>([])
  const fileSummary = ref('')
  const mapping = reactive({ farmCode: '', villageCode: '', visitDate: '', questions: {} as Record<string, string> })
  const yesWord = ref('')
  const noWord = ref('')
  const mode = ref<ImportModeValue>('all-or-nothing')
  const preview = ref<ImportPreview | null>(null)
  const outcome = ref<ImportOutcome | null>(null)
  const message = ref('')
  const busy = ref(false)

  const guess = (names: string[]) => columns.value.find(c => names.includes(c.toLowerCase())) ?? ''

  function useText(name: string, text: string) {
    fileName.value = name
    csv.value = text
    preview.value = null
    outcome.value = null
    message.value = ''
    try {
      const parsed = parseCsv(text)
      columns.value = parsed.columns
      fileSummary.value = `${parsed.records.length} rows, ${parsed.columns.length} columns separated by ${separatorName(parsed.delimiter)}.`
    }
    catch (error) {
      columns.value = []
      fileSummary.value = ''
      message.value = error instanceof CsvFileError ? error.message : 'The file could not be read.'
      return
    }
    // Pre-filled where a column is named like the field or the question key.
    mapping.farmCode = guess(['farm_code', 'farmcode', 'farm code', 'farm'])
    mapping.villageCode = guess(['village_code', 'villagecode', 'village code', 'village'])
    mapping.visitDate = guess(['visit_date', 'visitdate', 'visit date', 'date', 'interview_date'])
    mapping.questions = Object.fromEntries(questions().map(q => [q.key, guess([q.key.toLowerCase(), q.label.toLowerCase()])]))
  }

  function fileProblem(text: string) {
    csv.value = ''
    columns.value = []
    fileSummary.value = ''
    message.value = text
  }

  watch([mapping, yesWord, noWord], () => {
    preview.value = null
    outcome.value = null
  }, { deep: true })

  function body(): ImportRequestInput {
    const words = yesWord.value.trim() || noWord.value.trim() ? { yes: yesWord.value.trim(), no: noWord.value.trim() } : undefined
    return {
      csv: csv.value,
      fileName: fileName.value,
      mode: mode.value,
      mapping: {
        farmCode: mapping.farmCode,
        villageCode: mapping.villageCode,
        ...(mapping.visitDate ? { visitDate: mapping.visitDate } : {}),
        questions: Object.fromEntries(Object.entries(mapping.questions).filter(([, c]) => c))
      },
      yesNoWords: words
    }
  }

  async function send<T>(path: string): Promise<T | null> {
    busy.value = true
    message.value = ''
    try {
      const answer = await $fetch.raw<T>(`/api/rounds/${roundId()}/imports${path}`, { method: 'POST', body: body(), ignoreResponseError: true })
      const data = answer._data as T & { message?: string }
      if (answer.status >= 400 && answer.status !== 422) {
        message.value = data?.message ?? 'The server could not take the file. Try again in a minute.'
        return null
      }
      return data
    }
    catch {
      message.value = 'No connection to the server. Try again.'
      return null
    }
    finally {
      busy.value = false
    }
  }

  async function check() {
    outcome.value = null
    const answer = await send<ImportPreview>('/preview')
    if (answer) preview.value = answer
  }

  async function importRows() {
    const answer = await send<ImportOutcome>('')
    if (answer) outcome.value = answer
  }

  const report = computed(() => outcome.value?.report ?? preview.value?.report ?? [])
  const truncated = computed(() => outcome.value?.reportTruncated ?? preview.value?.reportTruncated ?? false)

  return { fileName, columns, fileSummary, mapping, yesWord, noWord, mode, preview, outcome, message, busy, report, truncated, useText, fileProblem, check, importRows }
}
