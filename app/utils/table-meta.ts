import type { RowData } from '@tanstack/vue-table'

// What UiDataTable reads from a column's `meta`: figures align right, and digits can line up in the mono font.
declare module '@tanstack/vue-table' {
  // eslint-disable-next-line @typescript-eslint/no-unused-vars
  interface ColumnMeta<TData extends RowData, TValue> {
    align?: 'right'
    mono?: boolean
    /** Kept on one line: a range like "-0.106 to -0.047" must not break in the middle. */
    nowrap?: boolean
  }
}

/** The meta of a column of figures: aligned right, in the mono font, on one line. */
export const FIGURES = { align: 'right', mono: true, nowrap: true } as const
