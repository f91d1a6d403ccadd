import adapter from '@sveltejs/adapter-node';
import { vitePreprocess } from '@sveltejs/vite-plugin-svelte';

/** @type {import('@sveltejs/kit').Config} */
const config = {
	preprocess: vitePreprocess(),
	kit: {
		adapter: adapter({ out: 'build' }),
		csrf: { trustedOrigins: [] },
		// Content Security Policy for every page. SvelteKit adds a per-response nonce to
		// script-src for its own start-up script, so no inline script runs without it. Our pages carry
		// no style attributes (Svelte's style directives go through the CSSOM, which CSP allows). blob: serves label PDFs opened from the page;
		// the scan page's camera stream needs no source.
		csp: {
			mode: 'nonce',
			directives: {
				'default-src': ['self'],
				'script-src': ['self'],
				// our stylesheets, and the one style attribute SvelteKit's route announcer carries
				// (allowed by its hash alone; no other inline style may apply)
				'style-src': ['self', 'unsafe-hashes', 'sha256-S8qMpvofolR8Mpjy4kQvEm7m1q8clzU4dfDH0AmvZjo='],
				'img-src': ['self', 'data:', 'blob:'],
				'font-src': ['self'],
				'connect-src': ['self'],
				'media-src': ['self', 'blob:'],
				'object-src': ['none'],
				'base-uri': ['self'],
				'form-action': ['self'],
				'frame-ancestors': ['none']
			}
		}
	}
};

export default config;
