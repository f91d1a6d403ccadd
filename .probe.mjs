const base = 'http://127.0.0.1:55016';
const s = await fetch(`${base}/api/auth/sign-in`, { method: 'POST', headers: { 'content-type': 'application/json', origin: base }, body: JSON.stringify({ email: 'curator@brightwater.example', password: 'brightwater-demo' }) });
const cookie = s.headers.get('set-cookie').split(';')[0];
const t = [];
for (let i = 0; i < 30; i++) { const a = performance.now(); const r = await fetch(`${base}/api/items/${process.argv[2]}/lineage`, { headers: { cookie } }); const b = await r.text(); t.push(performance.now() - a); if (i === 0) console.log(r.status, b.length); }
t.sort((a, b) => a - b); console.log('p50', t[15].toFixed(1), 'min', t[0].toFixed(1), 'p95', t[28].toFixed(1));
