import type { Config } from 'tailwindcss';
import { themeColours } from './src/lib/components/palette';

export default {
	content: ['./src/**/*.{html,js,svelte,ts}'],
	theme: {
		extend: {
			fontFamily: {
				sans: ['"Atkinson Hyperlegible"', 'ui-sans-serif', 'system-ui', 'sans-serif']
			},
			// one palette, named by meaning (src/lib/components/palette.ts): pages, badges and charts agree
			colors: themeColours()
		}
	},
	plugins: []
} satisfies Config;
