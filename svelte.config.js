import adapter from '@sveltejs/adapter-node';
import { vitePreprocess } from '@sveltejs/vite-plugin-svelte';

/** @type {import('@sveltejs/kit').Config} */
const config = {
	preprocess: vitePreprocess(),
	kit: {
		adapter: adapter({ out: 'build' }),
		// hooks.server.ts checks the origin itself: browsers posting from another site are refused,
		// while instruments and scripts (which send no Origin header) may post multipart uploads.
		csrf: { trustedOrigins: ['*'] },
		// Content-Security-Policy on every page: scripts only from this origin or with the per-response nonce (no
		// 'unsafe-inline' for scripts); inline style attributes stay allowed (Svelte and Chart.js set them). No framing.
		csp: {
			mode: 'auto',
			directives: {
				'default-src': ['self'],
				'script-src': ['self'],
				'style-src': ['self', 'unsafe-inline'],
				'img-src': ['self', 'data:', 'blob:'],
				'font-src': ['self'],
				'connect-src': ['self'],
				'object-src': ['none'],
				'base-uri': ['self'],
				'form-action': ['self'],
				'frame-ancestors': ['none']
			}
		}
	}
};

export default config;
