/**
 * Printing opens every folded section (a closed <details> prints as its summary line only) and folds back
 * afterwards, so the paper copy holds everything the screen can show.
 */
export function usePrintExpanded() {
  let opened: HTMLDetailsElement[] = []
  const before = () => {
    opened = [...document.querySelectorAll<HTMLDetailsElement>('details:not([open])')]
    opened.forEach((d) => {
      d.open = true
    })
  }
  const after = () => {
    opened.forEach((d) => {
      d.open = false
    })
    opened = []
  }
  onMounted(() => {
    window.addEventListener('beforeprint', before)
    window.addEventListener('afterprint', after)
  })
  onBeforeUnmount(() => {
    window.removeEventListener('beforeprint', before)
    window.removeEventListener('afterprint', after)
  })
}
