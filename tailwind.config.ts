import type { Config } from 'tailwindcss';

export default {
	content: ['./src/**/*.{html,js,svelte,ts}'],
	theme: {
		extend: {
			fontFamily: {
				sans: ['"Atkinson Hyperlegible"', 'ui-sans-serif', 'system-ui', 'sans-serif']
			},
			colors: {
				// Regolog's own palette: basalt greys, a regolith ochre and a deep slate-teal.
				basalt: {
					50: '#f6f6f4',
					100: '#e9e8e3',
					200: '#d3d1c8',
					300: '#b3afa2',
					500: '#6f6a5c',
					700: '#3f3c34',
					800: '#2b2924',
					900: '#1c1b18'
				},
				ochre: { 100: '#f8ead2', 300: '#e7c27f', 500: '#c98a2b', 700: '#8a5a14' },
				tarn: { 100: '#dcefee', 300: '#8fc7c3', 500: '#2f7f7a', 700: '#1d524f', 900: '#0f2e2c' },
				alert: { 100: '#fbe3df', 500: '#b83a26', 700: '#7d2415' }
			}
		}
	},
	plugins: []
} satisfies Config;
