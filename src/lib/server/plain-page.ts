// Pages answered from hooks, before any route runs (guard refusals, database down), with the product's look.
export function plainPage(status: number, title: string, message: string, requestId?: string) {
	const escape = (s: string) => s.replace(/[&<>"]/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' })[c]!);
	const body = `<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width,initial-scale=1">
<title>${status} · ${escape(title)} · Lotgate</title>
<style>body{font-family:system-ui,sans-serif;background:#f6f4ee;color:#1c2a33;margin:0;display:grid;place-items:center;min-height:100vh}
main{max-width:34rem;padding:2rem;border:2px solid #1f3a4d;border-radius:.75rem;background:#fff}
h1{margin:0 0 .5rem;font-size:1.4rem}p{line-height:1.5}a{color:#1f3a4d;font-weight:600}small{color:#5b6770}</style></head>
<body><main><h1>${status} · ${escape(title)}</h1><p>${escape(message)}</p><p><a href="/">Back to your home page</a></p>
${requestId ? `<small>Request ${escape(requestId)}</small>` : ''}</main></body></html>`;
	return new Response(body, { status, headers: { 'content-type': 'text/html; charset=utf-8', 'cache-control': 'no-store' } });
}
