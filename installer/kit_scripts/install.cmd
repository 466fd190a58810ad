@echo off
rem Install Tamis for this user from this kit (no network, no administrator rights).
rem Runs install.ps1 with script execution allowed for this one process only.
powershell.exe -NoProfile -ExecutionPolicy Bypass -File "%~dp0install.ps1" %*
if errorlevel 1 (echo Installation failed; see the message above. & pause & exit /b 1)
pause
