// The closing lines of `npm start`: how to stop, the database, then the demo accounts and the URL last, so the two
// things a person needs next are at the bottom of the terminal.
export function startBanner(options: {
	url: string;
	seconds: number;
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
	lines.push(`Lotgate is serving on ${options.url} (ready in ${options.seconds.toFixed(1)} s)`);
	return lines;
}
