// The phone's one IndexedDB database. This module alone knows its schema.
//
// Stores:
//   packs    site packs kept for offline use, by site id
//   outbox   unsent as-built records with their photos, by record uuid
//   refused  records (or photos) the server refused for good, with its reason
//   drafts   what is typed into an as-built form, with its photos, by person and bearing
//            (version 2): kept from the first keystroke until the record is in the outbox
//
// An upgrade only ever adds: each step runs for every version the phone skipped, and no
// store is dropped, because an outbox lost in an upgrade is a bearing closed up unchecked.

export const DB_NAME = "sitecheck";
export const DB_VERSION = 2;

function upgrade(db, oldVersion) {
  switch (oldVersion) {
    case 0: {
      db.createObjectStore("packs", { keyPath: "site.id" });
      const outbox = db.createObjectStore("outbox", { keyPath: "uuid" });
      outbox.createIndex("created", "created");
      db.createObjectStore("refused", { keyPath: "uuid" });
    }
    // falls through
    case 1:
      db.createObjectStore("drafts", { keyPath: "key" });
    // falls through: later versions add their steps below, never a delete
  }
}

let opening = null;

export function openDb() {
  if (!opening) {
    opening = new Promise((resolve, reject) => {
      const request = indexedDB.open(DB_NAME, DB_VERSION);
      request.onupgradeneeded = (event) => upgrade(request.result, event.oldVersion);
      request.onsuccess = () => {
        const db = request.result;
        // Another tab with a newer version wants in: step aside rather than block it.
        db.onversionchange = () => { db.close(); opening = null; };
        resolve(db);
      };
      request.onerror = () => { opening = null; reject(request.error); };
      request.onblocked = () => console.warn("sitecheck: close other sitecheck tabs to update");
    });
  }
  return opening;
}

function done(tx) {
  return new Promise((resolve, reject) => {
    tx.oncomplete = () => resolve();
    tx.onerror = () => reject(tx.error);
    tx.onabort = () => reject(tx.error || new DOMException("aborted", "AbortError"));
  });
}

function result(request) {
  return new Promise((resolve, reject) => {
    request.onsuccess = () => resolve(request.result);
    request.onerror = () => reject(request.error);
  });
}

export async function getAll(store) {
  const db = await openDb();
  return result(db.transaction(store).objectStore(store).getAll());
}

export async function get(store, key) {
  const db = await openDb();
  return result(db.transaction(store).objectStore(store).get(key));
}

export async function count(store) {
  const db = await openDb();
  return result(db.transaction(store).objectStore(store).count());
}

export async function put(store, value) {
  const db = await openDb();
  const tx = db.transaction(store, "readwrite");
  tx.objectStore(store).put(value);
  return done(tx); // resolves only once the write is durable in the transaction's sense
}

export async function remove(store, key) {
  const db = await openDb();
  const tx = db.transaction(store, "readwrite");
  tx.objectStore(store).delete(key);
  return done(tx);
}

// Move one value between stores in one transaction: it is in one or the other, never neither.
export async function move(from, key, to, value) {
  const db = await openDb();
  const tx = db.transaction([from, to], "readwrite");
  tx.objectStore(to).put(value);
  tx.objectStore(from).delete(key);
  return done(tx);
}

// Write several stores in one transaction: [[store, value or null to delete, key], ...].
// A fourth element {ifPresent: true} writes the value only if `key` is still in the store: a
// sender holding an old copy (a second tab, on a browser with no Web Locks) must never bring
// back an item that another sender has already sent or moved to the refused list.
export async function writeAll(changes) {
  const db = await openDb();
  const tx = db.transaction([...new Set(changes.map((c) => c[0]))], "readwrite");
  for (const [store, value, key, options] of changes) {
    const objects = tx.objectStore(store);
    if (value === null) objects.delete(key);
    else if (options && options.ifPresent) {
      objects.count(key).onsuccess = (event) => {
        if (event.target.result) objects.put(value);
      };
    } else objects.put(value);
  }
  return done(tx);
}

// Update a value only if it is still kept (see writeAll).
export function putIfPresent(store, value, key) {
  return writeAll([[store, value, key, { ifPresent: true }]]);
}

export async function outboxInOrder() {
  const db = await openDb();
  return result(db.transaction("outbox").objectStore("outbox").index("created").getAll());
}
