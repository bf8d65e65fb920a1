/* cross_core: what handing a 256 KiB chunk from one vCPU to the other costs.
 * One thread writes the buffer, another reads every cache line of it; with
 * argument 0 both run on CPU 0, with 1 the reader runs on CPU 1.  Prints
 * microseconds a round (writes and reads).  A machine check for
 * bench/RESULTS.md (session 26), not part of make bench:
 *
 *     cc -O2 -pthread -o /tmp/cross_core bench/cross_core.c
 *     /tmp/cross_core 0; /tmp/cross_core 1 */
#define _GNU_SOURCE
#include <pthread.h>
#include <sched.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <stdatomic.h>
#include <time.h>
#define N (256*1024)
static char *buf; static atomic_int turn; static int cross; static long rounds=4000;
static double now(void){struct timespec t;clock_gettime(CLOCK_MONOTONIC,&t);return t.tv_sec+t.tv_nsec*1e-9;}
static void pin(int c){cpu_set_t s;CPU_ZERO(&s);CPU_SET(c,&s);pthread_setaffinity_np(pthread_self(),sizeof s,&s);}
static volatile unsigned long sink; static double rtime;
static void *reader(void*a){ pin(cross?1:0); for(long r=0;r<rounds;r++){ while(atomic_load(&turn)!=1); double t=now(); unsigned long s=0; for(int i=0;i<N;i+=64) s+=buf[i]; sink+=s; rtime+=now()-t; atomic_store(&turn,0);} return 0;}
int main(int c,char**v){ cross=atoi(v[1]); buf=aligned_alloc(64,N); memset(buf,1,N); pthread_t th; 
 if(!cross){ pin(0); double wt=0; for(long r=0;r<rounds;r++){ double t=now(); memset(buf,r,N); wt+=now()-t; t=now(); unsigned long s=0; for(int i=0;i<N;i+=64) s+=buf[i]; sink+=s; rtime+=now()-t;} printf("same core: write %.1f us read %.1f us per 256K\n",wt/rounds*1e6,rtime/rounds*1e6); return 0;}
 pthread_create(&th,0,reader,0); pin(0); double wt=0; for(long r=0;r<rounds;r++){ while(atomic_load(&turn)!=0); double t=now(); memset(buf,r,N); wt+=now()-t; atomic_store(&turn,1);} while(atomic_load(&turn)!=0); pthread_join(th,0);
 printf("cross core: write %.1f us read %.1f us per 256K\n",wt/rounds*1e6,rtime/rounds*1e6); }
