import type { Config } from 'tailwindcss';

// Lotgate's own tokens: a harbour-blue frame, warm paper ground, and verdict tones that always travel with a word and a shape.
export default {
	content: ['./src/**/*.{html,svelte,ts}'],
	theme: {
		extend: {
			fontFamily: { sans: ['"Source Sans 3"', 'system-ui', 'sans-serif'] },
			colors: {
				ink: '#1c2a33',
				muted: '#5b6770',
				paper: '#f6f4ee',
				card: '#ffffff',
				line: '#d9d4c7',
				harbour: { DEFAULT: '#1f3a4d', light: '#2f5570', faint: '#e3ebf0' },
				signal: '#f2c14e',
				verdict: {
					pass: '#2e6b3f',
					suspect: '#a3262a',
					unknown: '#5a4a8a',
					foreign: '#8a3d00',
					unusable: '#5b6770',
					pending: '#6b6b6b'
				}
			},
			borderRadius: { panel: '0.75rem' }
		}
	}
} satisfies Config;
