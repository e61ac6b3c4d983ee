import { BarElement, CategoryScale, Chart, Legend, LinearScale, LineElement, PointElement, Tooltip } from 'chart.js'

// Register only the Chart.js parts the model charts use, once, in the browser.
export default defineNuxtPlugin(() => {
  Chart.register(BarElement, CategoryScale, Legend, LinearScale, LineElement, PointElement, Tooltip)
  Chart.defaults.font.family = '"Atkinson Hyperlegible", system-ui, sans-serif'
  Chart.defaults.font.size = 14
  Chart.defaults.color = '#1b1d17'
})
