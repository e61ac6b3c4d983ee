import type { RowData } from '@tanstack/vue-table'

// What UiDataTable reads from a column's `meta`: figures align right, and digits can line up in the mono font.
declare module '@tanstack/vue-table' {
  // eslint-disable-next-line @typescript-eslint/no-unused-vars
  interface ColumnMeta<TData extends RowData, TValue> {
    align?: 'right'
    mono?: boolean
  }
}

/** The meta of a column of figures: aligned right, in the mono font. */
export const FIGURES = { align: 'right', mono: true } as const
