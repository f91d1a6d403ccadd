import adapter from '@sveltejs/adapter-node';
import { vitePreprocess } from '@sveltejs/vite-plugin-svelte';

/** @type {import('@sveltejs/kit').Config} */
const config = {
	preprocess: vitePreprocess(),
	kit: {
		adapter: adapter({ out: 'build' }),
		csrf: { trustedOrigins: [] },
		// Content Security Policy for every page. SvelteKit adds a per-response nonce to
		// script-src for its own start-up script, so no inline script runs without it. Pages carry
		// no style attributes (Svelte's style directives go through the CSSOM, which CSP allows), so
		// styles come only from our own stylesheets. blob: serves label PDFs opened from the page;
		// the scan page's camera stream needs no source.
		csp: {
			mode: 'nonce',
			directives: {
				'default-src': ['self'],
				'script-src': ['self'],
				'style-src': ['self'],
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
