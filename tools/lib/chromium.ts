/**
 * How every browser of the project starts: Debian's chromium (never a downloaded one), without a sandbox,
 * a GPU or background traffic. WebGL still works, through SwiftShader. Used by Playwright and the benchmarks.
 */
export const chromiumLaunchOptions = {
	executablePath: '/usr/bin/chromium',
	args: [
		'--no-sandbox',
		'--disable-gpu',
		'--disable-background-networking',
		'--disable-component-update',
		'--disable-sync',
		'--no-first-run'
	]
};
