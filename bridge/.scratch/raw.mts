import { connect } from 'node:net';
import { randomBytes } from 'node:crypto';
import { startBridge } from '../server.ts';
const b = await startBridge({ host:'127.0.0.1', port:0, secret:'s'.repeat(40), allowedOrigins:['http://x'], source:{kind:'sim'}, sampleRateHz:48000, channels:2, blockSize:1024, temps:{kind:'none'}, timeScale:1, seed:1, log: () => {} });
const t0 = Date.now();
await new Promise<void>((resolve) => {
  const s = connect(b.port, '127.0.0.1', () => { s.write(randomBytes(3000)); s.end(); });
  s.on('data', d => console.log('data', JSON.stringify(d.toString().slice(0,80))));
  s.on('error', (e) => { console.log('err', e.message); resolve(); });
  s.on('close', () => { console.log('close', Date.now()-t0); resolve(); });
});
await new Promise<void>((resolve) => {
  const s = connect(b.port, '127.0.0.1', () => { s.write(`GET /stream HTTP/1.1\r\nHost: 127.0.0.1:${b.port}\r\nUpgrade: websocket\r\nConnection: Upgrade\r\n`); setTimeout(() => s.destroy(), 50); });
  s.on('error', (e) => { console.log('err2', e.message); resolve(); });
  s.on('close', () => { console.log('close2', Date.now()-t0); resolve(); });
});
await b.close(); console.log('closed', Date.now()-t0);
