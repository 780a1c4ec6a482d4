// The closing lines of `npm start`: how to stop, the database, then the demo accounts and the URL last, so the two
// things a person needs next are at the bottom of the terminal.
export function startBanner(options: {
	url: string;
	seconds: number;
	/** Where the time went: loading the launcher, its checks (database, stamps, build), the app's boot to answering. */
	phases?: { launcher: number; checks: number; app: number };
	database: string;
	accounts: { email: string; roles: string[] }[] | null;
	password: string;
}): string[] {
	const lines = [`Database: ${options.database}`, 'Stop with Ctrl-C or `npm run stop`.'];
	if (options.accounts?.length) {
		lines.push(`Demo accounts (password "${options.password}"):`);
		const width = Math.max(...options.accounts.map((a) => a.email.length));
		for (const a of options.accounts) lines.push(`  ${a.email.padEnd(width)}  ${a.roles.join(', ')}`);
	}
	const p = options.phases;
	const detail = p ? `; launcher loaded in ${p.launcher.toFixed(1)} s, checks ${p.checks.toFixed(1)} s, app boot ${p.app.toFixed(1)} s` : '';
	lines.push(`Lotgate is serving on ${options.url} (ready in ${options.seconds.toFixed(1)} s${detail})`);
	return lines;
}
