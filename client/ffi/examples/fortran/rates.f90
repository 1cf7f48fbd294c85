! ratewell from Fortran: the same job as the C example through module `ratewell`.
! Usage: rates SERVER_URL [TABLE_FILE_DIR]. The demo dataset is invented.
program rates
  use, intrinsic :: iso_c_binding, only: c_double, c_int32_t, c_int64_t
  use ratewell
  implicit none
  integer, parameter :: n_temperatures = 40, rounds = 200
  type(ratewell_connection) :: connection
  type(ratewell_tables) :: tables, loaded
  real(c_double) :: temperatures(n_temperatures), checksum
  real(c_double), allocatable :: exc(:, :), deexc(:, :), exc2(:, :), deexc2(:, :)
  integer(c_int32_t), allocatable :: flags(:, :), flags2(:, :)
  character(len=4096) :: server, dir
  character(len=:), allocatable :: path
  character(len=512) :: message
  integer :: j, t, n_tables, round, upper, lower, stat

  if (command_argument_count() < 1) then
     write (*, '(a)') 'usage: rates SERVER_URL [TABLE_FILE_DIR]'
     stop 2
  end if
  call get_command_argument(1, server)
  call ratewell_open(connection, trim(server), 'demo', time_budget_s=30.0_c_double)
  call ratewell_fetch_tables(connection, 'Mk III', tables)
  write (*, '(2a)') 'stamp id ', ratewell_stamp(tables, RATEWELL_STAMP_ID)
  write (*, '(2a)') 'stamp version ', ratewell_stamp(tables, RATEWELL_STAMP_VERSION)
  write (*, '(2a)') 'stamp content_hash ', ratewell_stamp(tables, RATEWELL_STAMP_CONTENT_HASH)
  write (*, '(2a)') 'stamp table_set_digest ', ratewell_stamp(tables, RATEWELL_STAMP_TABLE_SET_DIGEST)

  do j = 1, n_temperatures
     temperatures(j) = 1500.0_c_double * (1.0_c_double + 0.37_c_double * real((j - 1) * (j - 1), c_double))
  end do
  n_tables = ratewell_table_count(tables)
  allocate(exc(n_temperatures, n_tables), deexc(n_temperatures, n_tables), flags(n_temperatures, n_tables))
  checksum = 0.0_c_double
  do round = 1, rounds
     call ratewell_evaluate(tables, temperatures, exc, deexc, flags)
     checksum = checksum + deexc(1 + mod(round, n_temperatures), 1)
  end do
  write (*, '(a, i0, a, es14.6)') 'rounds ', rounds, ' checksum ', checksum
  do j = 1, n_temperatures
     write (*, '(a, i0, 1x, z16.16)') 'T ', j - 1, transfer(temperatures(j), 0_c_int64_t)
  end do
  do t = 1, n_tables
     call ratewell_transition(tables, t, upper, lower)
     do j = 1, n_temperatures
        write (*, '(a, i0, 1x, i0, 1x, i0, 1x, z16.16, 1x, z16.16, 1x, i0)') 'V ', upper, lower, j - 1, &
             transfer(exc(j, t), 0_c_int64_t), transfer(deexc(j, t), 0_c_int64_t), flags(j, t)
     end do
  end do

  if (command_argument_count() >= 2) then
     call get_command_argument(2, dir)
     call ratewell_save(tables, trim(dir), path)
     call ratewell_load(path, loaded)
     allocate(exc2, mold=exc)
     allocate(deexc2, mold=deexc)
     allocate(flags2, mold=flags)
     call ratewell_evaluate(loaded, temperatures, exc2, deexc2, flags2)
     if (all(transfer(exc2, 0_c_int64_t, size(exc2)) == transfer(exc, 0_c_int64_t, size(exc))) .and. &
          all(transfer(deexc2, 0_c_int64_t, size(deexc2)) == transfer(deexc, 0_c_int64_t, size(deexc))) .and. &
          all(flags2 == flags)) then
        write (*, '(2a)') 'file same-bits ', path
     else
        write (*, '(2a)') 'file DIFFERENT ', path
     end if
     call ratewell_free(loaded)
  end if

  ! A refused request comes back through stat and errmsg.
  temperatures(1) = -5.0_c_double
  message = ''
  call ratewell_evaluate(tables, temperatures, exc, deexc, flags, stat=stat, errmsg=message)
  write (*, '(a, i0, 1x, a)') 'refusal ', stat, trim(message)

  call ratewell_free(tables)
  call ratewell_close(connection)
end program rates
