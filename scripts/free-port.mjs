// Prints a TCP port that is free on 127.0.0.1 right now (the kernel picks it).
import { createServer } from 'node:net';
const server = createServer();
server.listen(0, '127.0.0.1', () => {
  const address = server.address();
  process.stdout.write(`${typeof address === 'object' && address ? address.port : 0}\n`);
  server.close();
});
