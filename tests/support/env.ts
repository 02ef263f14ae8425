/** What tools/test.ts hands the test processes. */
export function testDatabaseUrl(): string {
	const url = process.env.DATABASE_URL;
	if (!url) throw new Error('DATABASE_URL is not set: run the suite with `npm test`');
	return url;
}
