/* server.h: the Modbus TCP server of the simulator (libmodbus, select loop, several clients). */
#ifndef GRITLINE_SIM_SERVER_H
#define GRITLINE_SIM_SERVER_H

#include "faults.h"
#include "model.h"
#include "regs.h"
#include "rng.h"
#include "truth.h"
#include "writelog.h"

#include <modbus.h>
#include <signal.h>
#include <stdint.h>
#include <stdio.h>
#include <sys/types.h>

#define SIM_MAX_CLIENTS 32 /* connections served at once; more are closed at accept */

typedef struct SIM_Client {
  int fd;        /* socket, -1 = free slot */
  char name[64]; /* "address:port" of the peer */
} SIM_Client;

typedef struct SIM_Server {
  /* Wiring, set by the program before SIM_ServerRun. */
  const SIM_Scenario *sc;    /* the scenario */
  SIM_Model *model;          /* the machine */
  SIM_Truth *truth;          /* ground-truth files */
  SIM_FaultSet *faults;      /* faults of the run */
  SIM_WriteLog *write_log;   /* write requests */
  int64_t epoch_ms;          /* ms since the UNIX epoch */
  double speed;              /* sim seconds per real second */
  int unit_id;               /* unit identifier answered */
  const char *control_path;  /* control file of run-time faults, NULL = none */
  FILE *diag;                /* where warnings go (the program's stderr), NULL = nowhere */

  /* Internal. */
  modbus_t *ctx;                       /* libmodbus context (server side) */
  modbus_mapping_t *map;               /* what modbus_reply reads and writes */
  int listen_fd;                       /* listening socket */
  int port;                            /* bound port */
  char bound[96];                      /* "127.0.0.1:5020" */
  SIM_Client clients[SIM_MAX_CLIENTS]; /* connected clients */
  int coil_was_set;                    /* dress-request coil at the last look (rising edge = request) */
  int64_t last_sim_ms;                 /* ms, latest sim time used: the clock never goes back */
  SIM_Image image;                     /* last image built (kept while frozen) */
  int image_valid;                     /* 1 once image holds a snapshot */
  SIM_Rng rng;                         /* garbage bytes */
  int control_seen;                    /* 1 when the control file existed at the last look */
  struct timespec control_mtime;       /* its modification time then */
  off_t control_size;                  /* its size then */
  ino_t control_ino;                   /* its inode then */
} SIM_Server;

/* Sets defaults in *srv (no sockets yet). */
void SIM_ServerInit(SIM_Server *srv);
/* Listens on address:port (port 0 = a free port; address may be a name or
 * IPv6). Returns 0, or -1 with "address:port: reason" in err. */
int SIM_ServerListen(SIM_Server *srv, const char *address, int port, char *err, size_t errsize);
/* Serves until *stop becomes non-zero. Returns 0, or -1 on a fatal error
 * (truth file not writable) with the reason in err. */
int SIM_ServerRun(SIM_Server *srv, volatile sig_atomic_t *stop, char *err, size_t errsize);
/* Closes every socket and frees libmodbus objects. */
void SIM_ServerClose(SIM_Server *srv);

/* Checks a request PDU (function code first, `len` bytes) against the register
 * map: returns 0 when it may be answered, else the Modbus exception code
 * (01 illegal function, 02 illegal data address, 03 illegal data value), in
 * the order of the Modbus Application Protocol specification's state diagrams. */
int SIM_CheckRequest(const uint8_t *pdu, int len);

#endif
