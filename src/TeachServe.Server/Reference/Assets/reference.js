// Renders the server's own OpenAPI document (/openapi/v1.json) as a plain reference page: nothing is loaded from
// elsewhere and every text goes in through textContent, so the document cannot inject markup.
const el = (tag, attrs = {}, ...children) => {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (k === 'class') node.className = v; else node.setAttribute(k, v);
  }
  for (const child of children) if (child !== null && child !== undefined) node.append(child);
  return node;
};

const refName = ref => ref.split('/').pop();
const slug = text => text.toLowerCase().replace(/[^a-z0-9]+/g, '-').replace(/^-|-$/g, '');

function typeOf(schema) {
  if (!schema) return '';
  if (schema.$ref) return refName(schema.$ref);
  if (schema.enum) return schema.enum.map(v => JSON.stringify(v)).join(' | ');
  if (schema.type === 'array') return `${typeOf(schema.items)}[]`;
  if (schema.oneOf || schema.anyOf) return (schema.oneOf || schema.anyOf).map(typeOf).join(' | ');
  const type = Array.isArray(schema.type) ? schema.type.join(' | ') : (schema.type || 'object');
  return schema.format ? `${type} (${schema.format})` : type;
}

function schemaLink(schema) {
  const text = typeOf(schema);
  const ref = schema && (schema.$ref || (schema.items && schema.items.$ref));
  return ref ? el('a', { href: `#schema-${slug(refName(ref))}` }, el('code', {}, text)) : el('code', {}, text);
}

function contentRows(content) {
  return Object.entries(content || {}).map(([type, media]) => el('div', {}, el('code', {}, type), ' ', media.schema ? schemaLink(media.schema) : ''));
}

function operationCard(method, path, op, doc) {
  const id = op.operationId || `${method}-${path}`;
  const card = el('article', { class: 'operation', id: `op-${slug(id)}` },
    el('h3', {}, el('span', { class: `method ${method}` }, method.toUpperCase()), path));
  if (op.summary) card.append(el('p', { class: 'summary' }, op.summary));
  if (op.description && op.description !== op.summary) card.append(el('p', {}, op.description));
  const security = op.security ?? doc.security;
  const schemes = (security || []).flatMap(s => Object.keys(s));
  card.append(el('p', { class: 'meta' },
    op.operationId ? `operationId ${op.operationId} · ` : '',
    schemes.length ? `key: ${schemes.join(', ')}` : 'no key needed'));

  if (op.parameters && op.parameters.length) {
    const body = el('tbody');
    for (const p of op.parameters) {
      body.append(el('tr', {}, el('td', {}, el('code', {}, p.name)), el('td', {}, p.in), el('td', {}, p.required ? 'required' : 'optional'),
        el('td', {}, p.schema ? schemaLink(p.schema) : ''), el('td', {}, p.description || '')));
    }
    card.append(el('table', {}, el('thead', {}, el('tr', {}, ...['Parameter', 'In', '', 'Type', ''].map(h => el('th', { scope: 'col' }, h)))), body));
  }
  if (op.requestBody) {
    card.append(el('p', { class: 'meta' }, op.requestBody.required ? 'Request body (required):' : 'Request body:'), ...contentRows(op.requestBody.content));
  }
  const responses = el('tbody');
  for (const [status, response] of Object.entries(op.responses || {})) {
    responses.append(el('tr', {}, el('td', {}, el('code', {}, status)), el('td', {}, response.description || ''), el('td', {}, ...contentRows(response.content))));
  }
  card.append(el('table', { class: 'responses' }, el('thead', {}, el('tr', {}, ...['Status', 'Meaning', 'Body'].map(h => el('th', { scope: 'col' }, h)))), responses));
  return card;
}

function schemaCard(name, schema) {
  const card = el('article', { class: 'schema', id: `schema-${slug(name)}` }, el('h3', {}, name));
  if (schema.description) card.append(el('p', {}, schema.description));
  if (schema.enum) card.append(el('p', {}, 'One of ', el('code', {}, schema.enum.map(v => JSON.stringify(v)).join(', '))));
  const props = Object.entries(schema.properties || {});
  if (props.length) {
    const required = new Set(schema.required || []);
    const body = el('tbody');
    for (const [prop, s] of props) body.append(el('tr', {}, el('td', {}, el('code', {}, prop)), el('td', {}, schemaLink(s)), el('td', {}, required.has(prop) ? 'required' : ''), el('td', {}, s.description || '')));
    card.append(el('table', {}, body));
  }
  return card;
}

async function main() {
  const status = document.getElementById('status');
  let doc;
  try {
    const response = await fetch('/openapi/v1.json', { headers: { Accept: 'application/json' } });
    if (!response.ok) throw new Error(`HTTP ${response.status}`);
    doc = await response.json();
  } catch (e) {
    status.textContent = `The OpenAPI document could not be read (${e.message}).`;
    return;
  }
  document.getElementById('title').textContent = `${doc.info?.title || 'API'} ${doc.info?.version || ''}`.trim();
  const groups = new Map();
  for (const [path, item] of Object.entries(doc.paths || {})) {
    for (const method of ['get', 'post', 'put', 'patch', 'delete']) {
      const op = item[method];
      if (!op) continue;
      const tag = (op.tags && op.tags[0]) || 'Other';
      if (!groups.has(tag)) groups.set(tag, []);
      groups.get(tag).push(operationCard(method, path, op, doc));
    }
  }
  const toc = el('ul');
  const operations = document.getElementById('operations');
  for (const [tag, cards] of groups) {
    toc.append(el('li', {}, el('a', { href: `#tag-${slug(tag)}` }, `${tag} (${cards.length})`)));
    operations.append(el('h2', { id: `tag-${slug(tag)}` }, tag), ...cards);
  }
  const schemas = Object.entries(doc.components?.schemas || {});
  if (schemas.length) {
    toc.append(el('li', {}, el('a', { href: '#schemas' }, `Schemas (${schemas.length})`)));
    document.getElementById('schemas-list').append(...schemas.map(([name, schema]) => schemaCard(name, schema)));
    document.getElementById('schemas-section').hidden = false;
  }
  document.getElementById('toc').append(toc);
  const count = [...groups.values()].reduce((n, cards) => n + cards.length, 0);
  status.textContent = `${count} operations.`;
}

main();
