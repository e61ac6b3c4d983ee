import type { Config } from 'tailwindcss'

// Furrowcast's own palette: deep field green on warm paper, with a harvest amber accent.
// Contrast pairs (ink on paper, paper on field-800) stay above 7:1 so screens read in direct sunlight.
export default {
  content: [
    './app/**/*.{vue,ts}',
    './shared/**/*.ts'
  ],
  theme: {
    extend: {
      colors: {
        paper: { DEFAULT: '#f7f4ea', dim: '#ece6d3' },
        ink: { DEFAULT: '#1b1d17', soft: '#3f4238' },
        field: {
          50: '#eef5ef',
          100: '#d6e8da',
          300: '#8fbf9b',
          500: '#3d7a52',
          700: '#24523a',
          800: '#1f3b2d',
          900: '#132519'
        },
        harvest: { 300: '#f3c766', 500: '#d99a1e', 700: '#8a5a07' },
        alert: { 100: '#fbe3dc', 600: '#b3261e', 800: '#7a1810' }
      },
      fontFamily: {
        sans: ['"Atkinson Hyperlegible"', 'system-ui', 'sans-serif'],
        mono: ['"IBM Plex Mono"', 'ui-monospace', 'monospace']
      },
      minHeight: { touch: '3rem' },
      minWidth: { touch: '3rem' }
    }
  }
} satisfies Config
